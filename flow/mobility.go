package flow

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"github.com/memix-sim/memix/internal/special"
)

// MobilityMethod names how a drag coefficient is obtained.
type MobilityMethod int

const (
	// MethodAuto picks a closed form where it is exact or its accuracy is
	// documented for the configuration, and the numerical solution
	// otherwise.
	MethodAuto MobilityMethod = iota
	// MethodNumerical is the Galerkin solution of the rigid-disk problem
	// with the membrane's own D(k) (any subphases and friction).
	MethodNumerical
	// MethodSaffmanDelbruck: translation, ε ≪ 1 ([SaffmanDelbruckDrag]).
	MethodSaffmanDelbruck
	// MethodPetrovSchwille: translation, deep subphases ([PetrovSchwilleDrag]).
	MethodPetrovSchwille
	// MethodEvansSackmann: translation, friction acting everywhere
	// ([EvansSackmannDrag]).
	MethodEvansSackmann
	// MethodEvansSackmannExterior: translation, friction on the surrounding
	// membrane only ([EvansSackmannExteriorDrag]).
	MethodEvansSackmannExterior
	// MethodMembraneRotation: rotation, membrane viscosity only
	// ([MembraneRotDrag]).
	MethodMembraneRotation
	// MethodBrinkmanRotation: rotation with friction acting everywhere
	// ([BrinkmanRotDrag]).
	MethodBrinkmanRotation
	// MethodThinDiskRotation: rotation, η_m → 0 over deep subphases
	// ([ThinDiskRotDrag]).
	MethodThinDiskRotation
)

var methodNames = [...]string{
	MethodAuto:                  "auto",
	MethodNumerical:             "numerical",
	MethodSaffmanDelbruck:       "saffman-delbruck",
	MethodPetrovSchwille:        "petrov-schwille",
	MethodEvansSackmann:         "evans-sackmann",
	MethodEvansSackmannExterior: "evans-sackmann-exterior",
	MethodMembraneRotation:      "membrane-rotation",
	MethodBrinkmanRotation:      "brinkman-rotation",
	MethodThinDiskRotation:      "thin-disk-rotation",
}

// String returns the method's configuration name.
func (m MobilityMethod) String() string {
	if m < 0 || int(m) >= len(methodNames) {
		return fmt.Sprintf("MobilityMethod(%d)", int(m))
	}
	return methodNames[m]
}

// ParseMobilityMethod returns the method named s (case-insensitive; see
// [MobilityMethod.String] for the names).
func ParseMobilityMethod(s string) (MobilityMethod, error) {
	for m, name := range methodNames {
		if strings.EqualFold(strings.TrimSpace(s), name) {
			return MobilityMethod(m), nil
		}
	}
	return 0, fmt.Errorf("unknown mobility method %q: valid methods are %s", s, strings.Join(methodNames[:], ", "))
}

// forTranslation and forRotation report which quantity a closed form
// computes (auto and numerical serve both).
func (m MobilityMethod) forTranslation() bool {
	return m <= MethodEvansSackmannExterior
}

func (m MobilityMethod) forRotation() bool {
	return m <= MethodNumerical || m >= MethodMembraneRotation
}

// ErrNoFiniteDrag is wrapped by the error InclusionMobility returns when
// nothing resists the uniform translation of the membrane at long
// wavelength (no deep or wall subphase and no friction): the 2D Stokes
// paradox, the translational drag of an inclusion is infinite.
var ErrNoFiniteDrag = errors.New("no finite translational drag")

// MobilityEstimate is one drag coefficient with its provenance. Like every
// memix output it is a model prediction (continuum hydrodynamics of a flat
// membrane and rigid disk), not a measurement.
type MobilityEstimate struct {
	Method MobilityMethod
	// Drag is λ = F/U (force per velocity) for translation and
	// λ_R = torque/Ω (torque per angular velocity) for rotation.
	Drag float64
	// Diffusivity is k_BT/λ: length²/time for translation, 1/time
	// (rad²/time) for rotation.
	Diffusivity float64
	// RelError is the estimated relative error of Drag within the model:
	// the fit or asymptotic accuracy of a closed form, the a-posteriori
	// estimate of the numerical solution, 0 where the form is exact (to
	// round-off), NaN where the form is used outside its assumptions.
	RelError float64
	Source   string // published source, or "derived"
	Validity string // assumptions, validity range and accuracy, in words
}

// Mobility is the translational and rotational mobility of a rigid disk
// inclusion of radius Radius in a membrane at temperature k_BT = KT. Units
// follow the inputs (see the package documentation). The values are model
// predictions (continuum hydrodynamics of a flat membrane around a rigid
// disk), not measurements.
type Mobility struct {
	Radius, KT float64
	// EpsilonSD = a(η₊+η₋)/η_m = a/L_SD (both sides summed; 0 without
	// subphases). EpsilonScreen = a·sqrt(D(0)/η_m) = a/ℓ, with D(0) = ξ plus
	// η/H of every wall side (0 when D(0) = 0); with friction alone it is
	// Evans & Sackmann's a·sqrt(ξ/η_m).
	EpsilonSD, EpsilonScreen float64
	// Epsilon is the reduced size that governs the chosen method, defined
	// by EpsilonDef: EpsilonSD when there is a subphase, else EpsilonScreen.
	Epsilon    float64
	EpsilonDef string
	// Translation and Rotation are the two estimates.
	Translation, Rotation MobilityEstimate
}

// MobilityOption configures InclusionMobility.
type MobilityOption func(*mobilityConfig)

type mobilityConfig struct {
	trans, rot MobilityMethod
	basis      int
}

// DefaultMobilityBasis is the default number of basis functions per family
// of the numerical solution (see WithBasisSize).
const DefaultMobilityBasis = 8

// WithTranslationMethod forces the method of the translational estimate.
func WithTranslationMethod(m MobilityMethod) MobilityOption {
	return func(c *mobilityConfig) { c.trans = m }
}

// WithRotationMethod forces the method of the rotational estimate.
func WithRotationMethod(m MobilityMethod) MobilityOption {
	return func(c *mobilityConfig) { c.rot = m }
}

// WithBasisSize sets the number n of functions in each of the two basis
// families of the numerical solution (plus the rim line force), 1 ≤ n ≤ 24.
// The default, DefaultMobilityBasis, gives a relative error below 1e-9 for
// ε ≤ 10² and about 3e-7 at ε = 10⁴ in the tested configurations; the
// estimate for each call is reported in MobilityEstimate.RelError.
func WithBasisSize(n int) MobilityOption {
	return func(c *mobilityConfig) { c.basis = n }
}

// InclusionMobility returns the translational and rotational drag and
// diffusion coefficients of a rigid disk of the given radius in membrane m
// at temperature kT (k_BT, an energy in the unit system of m). Each
// estimate records its method, source, validity and estimated error.
//
// With MethodAuto (the default) the closed forms are used where they are
// exact or their accuracy is established: translation over deep subphases
// (or deep on one side and none on the other) without friction and
// walls, ε ≤ 10³: Petrov–Schwille; no subphase with friction:
// Evans–Sackmann (friction on the inclusion too); rotation without
// subphases: 4πη_m a² or the Brinkman rotlet. Everything else (walls,
// slip layers, friction with subphases, ε > 10³) is solved numerically;
// see the file mobility_galerkin.go for the method.
//
// Errors: a radius or kT that is not finite and > 0, an invalid membrane,
// a method for the wrong quantity, or a closed form lacking its parameter
// (e.g. Evans–Sackmann without friction). When nothing resists uniform
// translation (no deep or wall subphase and ξ = 0) the error wraps
// ErrNoFiniteDrag; the returned Mobility then still holds the rotational
// estimate, which is finite.
func InclusionMobility(m Membrane, radius, kT float64, opts ...MobilityOption) (Mobility, error) {
	cfg := mobilityConfig{basis: DefaultMobilityBasis}
	for _, o := range opts {
		o(&cfg)
	}
	var errs []error
	if !(radius > 0 && !math.IsInf(radius, 0)) {
		errs = append(errs, fmt.Errorf("inclusion radius = %g: must be finite and > 0 (a length, in the unit system of the membrane parameters)", radius))
	}
	if !(kT > 0 && !math.IsInf(kT, 0)) {
		errs = append(errs, fmt.Errorf("thermal energy kT = %g: must be finite and > 0 (an energy, in the unit system of the membrane parameters)", kT))
	}
	if cfg.basis < 1 || cfg.basis > 24 {
		errs = append(errs, fmt.Errorf("mobility basis size = %d: must be between 1 and 24 functions per family", cfg.basis))
	}
	if !cfg.trans.forTranslation() || cfg.trans < 0 {
		errs = append(errs, fmt.Errorf("translation method %s: not a translational method (valid: auto, numerical, saffman-delbruck, petrov-schwille, evans-sackmann, evans-sackmann-exterior)", cfg.trans))
	}
	if !cfg.rot.forRotation() || cfg.rot < 0 || int(cfg.rot) >= len(methodNames) {
		errs = append(errs, fmt.Errorf("rotation method %s: not a rotational method (valid: auto, numerical, membrane-rotation, brinkman-rotation, thin-disk-rotation)", cfg.rot))
	}
	if err := m.Validate(); err != nil {
		errs = append(errs, err)
	}
	if err := errors.Join(errs...); err != nil {
		return Mobility{}, fmt.Errorf("flow: inclusion mobility: %w", err)
	}

	a := radius
	res := Mobility{Radius: a, KT: kT}
	if es := m.SubphaseViscosity(); es > 0 {
		res.EpsilonSD = a * es / m.Viscosity
	}
	if d0 := m.D0(); d0 > 0 {
		res.EpsilonScreen = a * math.Sqrt(d0/m.Viscosity)
	}
	if res.EpsilonSD > 0 {
		res.Epsilon, res.EpsilonDef = res.EpsilonSD, "a(η₊+η₋)/η_m = a/L_SD (Saffman–Delbrück length, both subphases summed)"
	} else {
		res.Epsilon, res.EpsilonDef = res.EpsilonScreen, "a·sqrt(D(0)/η_m) = a/ℓ (screening length; friction ξ plus η/H of every wall side)"
	}

	rot, err := rotationEstimate(m, a, cfg)
	if err != nil {
		return Mobility{}, fmt.Errorf("flow: inclusion mobility: %w", err)
	}
	rot.Diffusivity = kT / rot.Drag
	res.Rotation = rot

	if !finiteTranslationalDrag(m) {
		return res, fmt.Errorf("flow: inclusion mobility: %w: neither subphase is deep or over a wall (upper %s, lower %s) and friction = 0, so nothing resists uniform translation (2D Stokes paradox); add a deep or wall subphase or friction > 0", ErrNoFiniteDrag, m.Upper.Kind, m.Lower.Kind)
	}
	tr, err := translationEstimate(m, a, cfg)
	if err != nil {
		return Mobility{}, fmt.Errorf("flow: inclusion mobility: %w", err)
	}
	tr.Diffusivity = kT / tr.Drag
	res.Translation = tr
	return res, nil
}

// finiteTranslationalDrag reports whether something resists uniform
// translation: D(k) ≥ c·k as k → 0 (a deep side) or D(0) > 0.
func finiteTranslationalDrag(m Membrane) bool {
	return m.D0() > 0 || m.Upper.Kind == Deep || m.Lower.Kind == Deep
}

// sides reports which kinds of layer the membrane has.
func sides(m Membrane) (deep, walls, slips, none int) {
	for _, s := range []Subphase{m.Upper, m.Lower} {
		switch s.Kind {
		case Deep:
			deep++
		case Wall:
			walls++
		case Slip:
			slips++
		default:
			none++
		}
	}
	return
}

const (
	srcSD       = "Saffman & Delbrück, PNAS 72, 3111 (1975)"
	srcPS       = "Petrov & Schwille, Biophys. J. 94, L41 (2008), b₂ = 0.51465 as corrected in Biophys. J. 103, 375 (2012); fit to Hughes, Pailthorpe & White, J. Fluid Mech. 110, 349 (1981)"
	srcES       = "Evans & Sackmann, J. Fluid Mech. 194, 553 (1988), plus the friction on the disk itself (derived)"
	srcESExt    = "Evans & Sackmann, J. Fluid Mech. 194, 553 (1988)"
	srcMemRot   = "Saffman, J. Fluid Mech. 73, 593 (1976) (from memory)"
	srcBrinkman = "derived: 2D Brinkman rotlet plus the friction on the disk"
	srcThinDisk = "Jeffery, Proc. Lond. Math. Soc. 14, 327 (1915), as in Kim & Karrila, Microhydrodynamics (1991) (from memory)"
	srcGalerkin = "memix Galerkin solution of the rigid-disk problem with the membrane's D(k)"
)

// outside returns the note for a closed form forced on a configuration
// with ingredients it ignores, or "" if there are none.
func outside(what ...string) string {
	var w []string
	for i := 0; i+1 < len(what); i += 2 {
		if what[i] != "" {
			w = append(w, what[i+1])
		}
	}
	if len(w) == 0 {
		return ""
	}
	return "outside its assumptions here: ignores " + strings.Join(w, " and ")
}

func flag(b bool) string {
	if b {
		return "x"
	}
	return ""
}

func translationEstimate(m Membrane, a float64, cfg mobilityConfig) (MobilityEstimate, error) {
	deep, walls, slips, _ := sides(m)
	es := m.SubphaseViscosity()
	eps := a * es / m.Viscosity
	method := cfg.trans
	if method == MethodAuto {
		switch {
		case deep > 0 && walls == 0 && slips == 0 && m.Friction == 0 && eps <= 1e3:
			method = MethodPetrovSchwille
		case es == 0 && m.Friction > 0:
			method = MethodEvansSackmann
		default:
			method = MethodNumerical
		}
	}
	e := MobilityEstimate{Method: method}
	switch method {
	case MethodNumerical:
		lam, rel, err := diskDrag(m, a, diskTranslation, cfg.basis, diskQuad{})
		if err != nil {
			return e, err
		}
		e.Drag, e.RelError, e.Source = lam, rel, srcGalerkin
		e.Validity = galerkinValidity(rel, cfg.basis)
	case MethodSaffmanDelbruck, MethodPetrovSchwille:
		if es == 0 {
			return e, fmt.Errorf("translation method %s needs a subphase (η₊ + η₋ > 0); this membrane has none", method)
		}
		note := outside(flag(walls+slips > 0), "the depth of wall/slip layers (treated as deep)", flag(m.Friction > 0), "friction")
		if method == MethodSaffmanDelbruck {
			if eps >= 2*math.Exp(-special.EulerGamma) {
				return e, fmt.Errorf("translation method saffman-delbruck: ε = a(η₊+η₋)/η_m = %g ≥ 2e^{−γ} ≈ 1.12, where the form is negative; valid for ε ≪ 1", eps)
			}
			e.Drag, e.Source = SaffmanDelbruckDrag(m.Viscosity, es, a), srcSD
			// First neglected term of the small-ε expansion (Hughes,
			// Pailthorpe & White 1981; the 4ε/π of Petrov–Schwille).
			e.RelError = 4 * eps / math.Pi / (math.Log(2/eps) - special.EulerGamma)
			e.Validity = fmt.Sprintf("ε ≪ 1; relative error about 4ε/(π(ln(2/ε) − γ)) = %.2g here (D too small by 0.018 %% at ε = 10⁻³, 0.26 %% at 10⁻², 4.4 %% at 0.1)", e.RelError)
		} else {
			e.Drag, e.Source = PetrovSchwilleDrag(m.Viscosity, es, a), srcPS
			e.RelError = 2.5e-4
			e.Validity = "deep subphases (or none on one side), no friction; fit accurate to about 2×10⁻⁴ for 10⁻³ ≤ ε ≤ 10³ (at most 2.4×10⁻⁴ against the memix numerical solution), tending to the exact limits ε → 0 and ε → ∞"
		}
		if note != "" {
			e.RelError, e.Validity = math.NaN(), note+"; "+e.Validity
		}
	case MethodEvansSackmann, MethodEvansSackmannExterior:
		if m.Friction == 0 {
			return e, fmt.Errorf("translation method %s needs friction > 0; this membrane has none", method)
		}
		note := outside(flag(es > 0), "subphase tractions")
		if method == MethodEvansSackmann {
			e.Drag, e.Source = EvansSackmannDrag(m.Viscosity, m.Friction, a), srcES
			e.Validity = "exact for friction ξ acting everywhere (on the inclusion too) and no subphase, any ε = a·sqrt(ξ/η_m)"
		} else {
			e.Drag, e.Source = EvansSackmannExteriorDrag(m.Viscosity, m.Friction, a), srcESExt
			e.Validity = "exact for friction ξ acting on the surrounding membrane only (not on the inclusion) and no subphase; memix's flow model applies friction everywhere, see evans-sackmann"
		}
		if note != "" {
			e.RelError, e.Validity = math.NaN(), note+"; "+e.Validity
		}
	default:
		return e, fmt.Errorf("translation method %s: not a translational method", method)
	}
	return e, nil
}

func rotationEstimate(m Membrane, a float64, cfg mobilityConfig) (MobilityEstimate, error) {
	es := m.SubphaseViscosity()
	method := cfg.rot
	if method == MethodAuto {
		switch {
		case es == 0 && m.Friction == 0:
			method = MethodMembraneRotation
		case es == 0:
			method = MethodBrinkmanRotation
		default:
			method = MethodNumerical
		}
	}
	e := MobilityEstimate{Method: method}
	switch method {
	case MethodNumerical:
		lam, rel, err := diskDrag(m, a, diskRotation, cfg.basis, diskQuad{})
		if err != nil {
			return e, err
		}
		e.Drag, e.RelError, e.Source = lam, rel, srcGalerkin
		e.Validity = galerkinValidity(rel, cfg.basis)
	case MethodMembraneRotation:
		e.Drag, e.Source = MembraneRotDrag(m.Viscosity, a), srcMemRot
		e.Validity = "exact with neither subphase nor friction; with subphases it omits the relative correction 8ε/(3π), ε = a/L_SD (derived)"
		if note := outside(flag(es > 0), "subphase tractions", flag(m.Friction > 0), "friction"); note != "" {
			e.RelError, e.Validity = math.NaN(), note+"; "+e.Validity
		}
	case MethodBrinkmanRotation:
		if m.Friction == 0 {
			return e, fmt.Errorf("rotation method brinkman-rotation needs friction > 0; this membrane has none")
		}
		e.Drag, e.Source = BrinkmanRotDrag(m.Viscosity, m.Friction, a), srcBrinkman
		e.Validity = "exact for friction acting everywhere and no subphase, any ε = a·sqrt(ξ/η_m)"
		if note := outside(flag(es > 0), "subphase tractions"); note != "" {
			e.RelError, e.Validity = math.NaN(), note+"; "+e.Validity
		}
	case MethodThinDiskRotation:
		if es == 0 {
			return e, fmt.Errorf("rotation method thin-disk-rotation needs a subphase (η₊ + η₋ > 0); this membrane has none")
		}
		e.Drag, e.Source = ThinDiskRotDrag(es, a), srcThinDisk
		e.Validity = "deep subphases with η_m → 0 (ε ≫ 1); the membrane adds a relative O(ln ε/ε): about 10/ε for ε = 10³–10⁵ (measured with the numerical solution)"
		_, walls, slips, _ := sides(m)
		if note := outside(flag(walls+slips > 0), "the depth of wall/slip layers (treated as deep)", flag(m.Friction > 0), "friction"); note != "" {
			e.RelError, e.Validity = math.NaN(), note+"; "+e.Validity
		} else {
			e.RelError = 10 / (a * es / m.Viscosity)
		}
	default:
		return e, fmt.Errorf("rotation method %s: not a rotational method", method)
	}
	return e, nil
}

func galerkinValidity(rel float64, n int) string {
	if math.IsNaN(rel) {
		return "exact within the continuum model (flat incompressible membrane, Stokes subphases, friction acting on the disk too); no error estimate with one basis function per family"
	}
	return fmt.Sprintf("exact within the continuum model (flat incompressible membrane, Stokes subphases, friction acting on the disk too) up to the estimated discretisation error %.1e (from the changes over the nested bases with %d, %d and %d functions per family)", rel, max(n-4, 1), max(n-2, 1), n)
}

// diskDrag returns the Galerkin drag with n functions per family (plus the
// rim line force) and an a-posteriori error estimate from the nested
// bases with n − 2 and n − 4 functions per family:
// |λ_n − λ_{n−2}| + |λ_{n−2} − λ_{n−4}| (twice the first term when n − 4 < 1),
// relative to λ_n, floored at 1e-13 for quadrature round-off, and NaN for
// n = 1. The Galerkin drag is a lower bound that increases with n, so the
// error is λ_exact − λ_n ≥ 0; summing two differences keeps the estimate
// above it where convergence is slow and uneven (large ε), at the price of
// overestimating it where convergence is fast. The membrane must have
// η_m > 0 (the rim line force then has finite dissipation).
func diskDrag(m Membrane, a float64, motion diskMotion, n int, q diskQuad) (lam, relErr float64, err error) {
	spec := diskBasisSpec{ring: m.Viscosity > 0, sing: n, bndd: n}
	fs := diskBasis(motion, a, spec)
	M := diskMatrix(m, a, motion, fs, q)
	load := make([]float64, len(fs))
	for i := range fs {
		load[i] = fs[i].load
	}
	lamAt := func(k int) (float64, error) {
		return galerkinDrag(M, len(fs), load, diskBasisSpec{ring: spec.ring, sing: k, bndd: k}.size())
	}
	if lam, err = lamAt(n); err != nil {
		return 0, 0, err
	}
	if n == 1 {
		return lam, math.NaN(), nil
	}
	l2, err := lamAt(max(n-2, 1))
	if err != nil {
		return 0, 0, err
	}
	est := 2 * math.Abs(lam-l2)
	if n-4 >= 1 {
		l4, err := lamAt(n - 4)
		if err != nil {
			return 0, 0, err
		}
		est = math.Abs(lam-l2) + math.Abs(l2-l4)
	}
	return lam, math.Max(est/lam, 1e-13), nil
}
