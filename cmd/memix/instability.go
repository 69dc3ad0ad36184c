package main

import (
	"fmt"
	"math"
	"strings"

	"github.com/memix-sim/memix/config"
	"github.com/memix-sim/memix/spectral"
	"github.com/memix-sim/memix/stability"
)

// The linear stability of a configuration's uniform state, in SI units,
// shared by memix stability and memix check: growth-rate curves s(k) and
// the answers derived from them. Every number is a model prediction of the
// linearised equations.

// branch is one growth-rate curve and its derived answers.
type branch struct {
	key   string // "active", "moment", "lipids"
	title string
	model string // how the rates are computed, for people
	rate  func(k float64) float64

	peak  stability.Peak
	bands []stability.Band

	// Critical activity (active branches): crit is nil and critNote says
	// why when there is none.
	crit     *stability.Critical
	critNote string

	// Box modes with |k| ≤ boxKMax, fastest first; unstable counts those
	// with a positive rate.
	box      []stability.BoxMode
	boxKMax  float64
	unstable int
}

// prediction is the stability analysis of one configuration.
type prediction struct {
	name string // label in comparisons
	cfg  config.Config

	act       stability.Active
	hasActive bool
	how       [2]string // where D_r and D_t come from
	conv      *stability.Convergence

	ch    stability.CahnHilliard
	hasCH bool

	kmin, kmax float64
	lx, ly     float64
	spacing    float64 // larger grid spacing
	gridKMax   float64 // largest wavenumber the dealiased grid keeps, the smaller of x and y

	branches []*branch
}

// noInstabilityError is a configuration in which nothing can become
// unstable (no active inclusions and no phase-separating lipids).
func noInstabilityError(c config.Config) error {
	return &config.FieldError{Key: "inclusions.model", Value: c.Inclusions.Model,
		Range: "moments or kinetic (or lipids.model = phase)",
		Err:   fmt.Errorf("%w: neither active inclusions nor phase-separating lipids: nothing can become unstable", config.ErrConflict)}
}

// stabilityParams returns the stability parameters of c in SI, mapping a
// diffusivity that cannot be computed to a configuration problem.
func stabilityParams(c config.Config) (act stability.Active, how [2]string, ch stability.CahnHilliard, chOK bool, err error) {
	hasActive := c.Inclusions.Model != "none"
	if hasActive {
		_, _, how, err = c.Diffusivities()
		if err != nil {
			// Diffusivities names the key it could not compute first in its message.
			key := "inclusions.trans_diffusion"
			if strings.HasPrefix(err.Error(), "inclusions.rot_diffusion") {
				key = "inclusions.rot_diffusion"
			}
			return act, how, ch, false, &config.FieldError{Key: key, Range: "give it when the membrane has no finite drag",
				Err: fmt.Errorf("%w: %v", config.ErrMissing, err)}
		}
	}
	act, ch, chOK, err = c.Stability()
	if err != nil {
		return act, how, ch, chOK, err
	}
	if hasActive {
		if err := act.Validate(); err != nil {
			return act, how, ch, chOK, &config.FieldError{Key: "inclusions", Err: fmt.Errorf("%w: %v", config.ErrRange, err)}
		}
	}
	return act, how, ch, chOK, nil
}

// defaultKRange returns the wavenumber interval searched when none is
// given: from a tenth of the box's smallest wavenumber up to twice the
// largest wavenumber that can grow. Beyond k_D = sqrt(|βσ₀c₀|/(4η_m D_t))
// no active mode grows, because the flow-driven part of the rate is at
// most |βσ₀c₀|/(4η_m) (D(k) ≥ η_m k²; self-propulsion only adds
// oscillation) while every mode decays at least as D_t k²; beyond
// sqrt(1 − 3φ₀²)/ε no composition mode grows. Without translational
// diffusion nothing bounds the band: ten times the grid's Nyquist
// wavenumber is taken.
func defaultKRange(c config.Config, act stability.Active, hasActive bool, ch stability.CahnHilliard, hasCH bool) (kmin, kmax float64) {
	lx, ly := c.Grid.Lengths()
	kmin = 2 * math.Pi / math.Max(float64(lx), float64(ly)) / 10
	nyquist := math.Pi / float64(c.Grid.Spacing())
	top := 0.0
	if hasActive {
		if act.TransDiff > 0 {
			top = math.Max(top, 2*math.Sqrt(math.Abs(act.Alignment*act.Stress)/(4*act.Membrane.Viscosity*act.TransDiff)))
		} else {
			top = math.Max(top, 10*nyquist)
		}
	}
	if hasCH && 1-3*ch.Mean*ch.Mean > 0 {
		top = math.Max(top, 2*math.Sqrt(1-3*ch.Mean*ch.Mean)/ch.Width)
	}
	if !(top > 10*kmin) {
		top = math.Max(10*kmin, nyquist) // nothing grows anywhere
	}
	if hasActive && act.Speed > 0 {
		// Keep the kinetic operator within half its largest truncation
		// (see kineticModesNeeded); a band cut here is reported as open.
		top = math.Max(math.Min(top, kineticKCap(act)), 10*kmin)
	}
	return kmin, top
}

// kineticKCap is the wavenumber up to which kineticModesNeeded stays
// within half of stability.MaxModes.
func kineticKCap(act stability.Active) float64 {
	m := float64(stability.MaxModes / 2)
	return (m / 4) * (m / 4) * act.RotDiff / act.Speed
}

// kineticModesNeeded estimates the angular truncation at which the kinetic
// operator converges at wavenumber k: self-propulsion couples neighbouring
// modes at kV₀/2 while mode n is damped at n²D_r, so modes with n² well
// above kV₀/D_r hardly matter [practice; no source]. Four times that n is
// a generous estimate.
func kineticModesNeeded(act stability.Active, k float64) float64 {
	return 4 * math.Sqrt(k*act.Speed/act.RotDiff)
}

// predict analyses c on [kmin, kmax] (both 0: the default interval);
// critical says whether to find the critical activity, the costliest
// answer (a root search over many maximisations).
func predict(name string, c config.Config, kmin, kmax float64, critical bool) (*prediction, error) {
	act, how, ch, chOK, err := stabilityParams(c)
	if err != nil {
		return nil, err
	}
	p := &prediction{name: name, cfg: c, act: act, how: how, hasActive: c.Inclusions.Model != "none", ch: ch, hasCH: chOK}
	if !p.hasActive && !p.hasCH {
		return nil, noInstabilityError(c)
	}
	if kmin == 0 && kmax == 0 {
		kmin, kmax = defaultKRange(c, act, p.hasActive, ch, chOK)
	}
	p.kmin, p.kmax = kmin, kmax
	if !(kmin > 0 && kmax > kmin) || math.IsInf(kmax, 0) {
		return nil, flagError("kmax", human(kmax, dimWavenumber), "1/m", "> --kmin = "+human(kmin, dimWavenumber), config.ErrRange)
	}
	lx, ly := c.Grid.Lengths()
	nx, ny := c.Grid.Size()
	p.lx, p.ly = float64(lx), float64(ly)
	p.spacing = float64(c.Grid.Spacing())
	// The largest |k| the dealiased grid evolves in every direction: the
	// box modes inside this circle are the ones a run can follow.
	g, err := spectral.NewGrid(nx, ny, p.lx, p.ly)
	if err != nil {
		return nil, err
	}
	kx, ky := g.KMaxDealiased()
	p.gridKMax = math.Min(kx, ky)

	if p.hasActive {
		b := &branch{key: "active", title: "active inclusions"}
		switch {
		case act.Speed == 0:
			b.model = "closed form s(k) = −(βσ₀c₀/4)k²/D(k) − 4D_r − D_t k² (V₀ = 0)"
			b.rate = act.Rate
			if act.Alignment != 0 && critical {
				if cr, err := act.CriticalStress(kmin, kmax); err == nil {
					b.crit = &cr
				} else {
					b.critNote = err.Error()
				}
			}
		default:
			if m := kineticModesNeeded(act, kmax); m > stability.MaxModes {
				return nil, flagError("kmax", human(kmax, dimWavenumber), "1/m",
					fmt.Sprintf("≤ %s for %s", human(kmax*math.Pow(stability.MaxModes/m, 2), dimWavenumber), name),
					fmt.Errorf("%w: at this wavenumber self-propulsion (V₀ = %s, D_r = %s) needs about %.0f angular modes, more than the kinetic operator's %d; lower --kmax",
						config.ErrRange, human(act.Speed, config.DimVelocity), human(act.RotDiff, config.DimRate), m, stability.MaxModes))
			}
			ks := logSpace(kmin, kmax, stability.ScanPoints)
			conv, err := stability.Rates(make([]float64, len(ks)), act, ks, 0)
			if err != nil {
				return nil, fmt.Errorf("stability of %s: kinetic operator: %w", name, err)
			}
			p.conv = &conv
			kin, err := stability.NewKinetic(act, conv.Modes)
			if err != nil {
				return nil, err
			}
			b.model = fmt.Sprintf("kinetic operator, angular modes |n| ≤ %d (converged: largest change from M = %d is %.2g s⁻¹)", conv.Modes, conv.Previous, conv.Change)
			b.rate = kin.Rate
			if act.Alignment != 0 && critical {
				if cr, err := kin.CriticalStress(kmin, kmax); err == nil {
					b.crit = &cr
				} else {
					b.critNote = err.Error()
				}
			}
		}
		if act.Alignment == 0 {
			b.critNote = "alignment β = 0: the flow does not rotate the inclusions, so no activity destabilises the isotropic state"
		}
		p.branches = append(p.branches, b)
		if c.Inclusions.Model == "moments" {
			mom, err := stability.NewMoment(act)
			if err != nil {
				return nil, err
			}
			m := &branch{key: "moment", title: "moment model",
				model: "moment operator (c, m, Q), leading rate of the flow-coupled sector; both closures linearise alike about the isotropic state",
				rate:  mom.Rate}
			if act.Alignment != 0 && critical {
				if cr, err := mom.CriticalStress(kmin, kmax); err == nil {
					m.crit = &cr
				} else {
					m.critNote = err.Error()
				}
			} else {
				m.critNote = b.critNote
			}
			p.branches = append(p.branches, m)
		}
	}
	if p.hasCH {
		b := &branch{key: "lipids", title: "lipid phase separation",
			model:    fmt.Sprintf("Cahn–Hilliard s(k) = −Mk²(3φ₀² − 1 + ε²k²) about φ₀ = %g", ch.Mean),
			rate:     ch.Rate,
			critNote: fmt.Sprintf("unstable inside the spinodal |φ₀| < 1/√3 ≈ 0.5774 (φ₀ = %g)", ch.Mean)}
		p.branches = append(p.branches, b)
	}
	for _, b := range p.branches {
		if err := p.answer(b); err != nil {
			return nil, fmt.Errorf("stability of %s, %s: %w", name, b.title, err)
		}
	}
	return p, nil
}

// answer fills the derived answers of b.
func (p *prediction) answer(b *branch) error {
	var err error
	if b.peak, err = stability.Fastest(b.rate, p.kmin, p.kmax); err != nil {
		return err
	}
	if b.bands, err = stability.UnstableBands(b.rate, p.kmin, p.kmax); err != nil {
		return err
	}
	// The box modes that matter lie at or below the unstable band and
	// the peak; beyond them every rate falls.
	kb := math.Max(2*b.peak.K, 3*math.Pi/math.Min(p.lx, p.ly))
	for _, bd := range b.bands {
		kb = math.Max(kb, 1.01*bd.KHi)
	}
	b.boxKMax = math.Min(kb, p.gridKMax)
	if b.key != "active" || p.conv == nil {
		// A cheap rate: evaluate every mode.
		if b.box, err = stability.BoxModes(b.rate, p.lx, p.ly, b.boxKMax); err != nil {
			return err
		}
		for _, m := range b.box {
			if m.Rate > 0 {
				b.unstable++
			}
		}
		return nil
	}
	// The kinetic operator costs an eigenvalue problem per |k|: evaluate
	// it only at the nearBoxK distinct |k| of the box closest to the peak
	// (in ln k), where the fastest modes of a rate with one maximum lie,
	// and count the unstable modes by membership of the unstable bands.
	near, err := stability.BoxModes(func(k float64) float64 { return -math.Abs(math.Log(k / b.peak.K)) }, p.lx, p.ly, b.boxKMax)
	if err != nil {
		return err
	}
	sel := map[float64]bool{}
	for _, m := range near {
		if len(sel) < nearBoxK {
			sel[m.K] = true
		}
		for _, bd := range b.bands {
			if m.K > bd.KLo && m.K < bd.KHi {
				b.unstable++
				break
			}
		}
	}
	all, err := stability.BoxModes(func(k float64) float64 {
		if sel[k] {
			return b.rate(k)
		}
		return math.Inf(-1)
	}, p.lx, p.ly, b.boxKMax)
	if err != nil {
		return err
	}
	for _, m := range all {
		if !math.IsInf(m.Rate, -1) {
			b.box = append(b.box, m)
		}
	}
	return nil
}

// nearBoxK is the number of distinct box wavenumbers nearest the peak at
// which the kinetic operator is evaluated for the box modes.
const nearBoxK = 16

// pointsPerWavelength returns how many grid spacings the fastest
// wavelength of b spans.
func (p *prediction) pointsPerWavelength(b *branch) float64 { return b.peak.Wavelength / p.spacing }

// noBoxMode explains, for a branch with an unstable band but no unstable
// box mode, why none of the box's modes grows.
func (p *prediction) noBoxMode(b *branch) string {
	return fmt.Sprintf("the box holds no unstable mode that the grid resolves (unstable wavelengths %s; the box's longest wavelength is %s, the shortest the dealiased grid keeps %s): the uniform state is predicted stable in this box",
		bandText(b.bands), human(math.Max(p.lx, p.ly), config.DimLength), human(2*math.Pi/p.gridKMax, config.DimLength))
}

// bandText describes the unstable wavelengths of bands, e.g. "9.8 nm to
// 30 nm", saying where a band runs past the end of the interval.
func bandText(bands []stability.Band) string {
	var parts []string
	for _, b := range bands {
		short, long := b.Wavelengths()
		s, l := human(short, config.DimLength), human(long, config.DimLength)
		if b.HiOpen {
			s = "below " + s
		}
		if b.LoOpen {
			l = "beyond " + l
		}
		parts = append(parts, s+" to "+l)
	}
	return strings.Join(parts, " and ")
}
