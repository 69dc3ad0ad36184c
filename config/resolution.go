package config

import (
	"errors"
	"fmt"
	"math"

	"github.com/memix-sim/memix/stability"
)

// ErrResolution marks a length of the run that the grid does not resolve.
// Validate does not report it: a coarse grid is legal (for a quick look,
// or a convergence study), but results on it are unreliable, so memix run
// refuses such a configuration unless it is forced.
var ErrResolution = errors.New("the grid does not resolve it")

// Thresholds of the run's resolution check [practice; rules of thumb for
// pseudo-spectral runs, no source]: the equilibrium profile tanh(x/(√2 ε))
// of a Cahn–Hilliard interface needs interfacePoints grid points across
// its length ε√2, and the fastest-growing wavelength of an instability
// wavePoints points (with the 2/3 rule a grid keeps wavelengths down to
// 3 spacings, so 4 leaves a margin).
const (
	interfacePoints = 2
	wavePoints      = 4
)

// ResolutionWarnings returns a FieldError wrapping ErrResolution for each
// length of the run that the grid does not resolve:
//
//   - lipids.interface (lipids.model = phase): fewer than 2 grid points
//     across ε√2, the length of the tanh profile of an interface;
//   - the fastest-growing wavelength of the linear instability of the
//     uniform state (of the active inclusions, and of the Cahn–Hilliard
//     composition inside the spinodal): fewer than 4 grid points per
//     wavelength, or a growth rate still rising at wavelengths shorter
//     than the grid holds. It is reported under the grid key (grid.n, or
//     grid.nx / grid.ny when given) with the number of points needed.
//
// The wavelengths come from the linear stability of the uniform isotropic
// state (package stability; closed form for the moment model and for
// inclusions without self-propulsion, the kinetic operator at
// inclusions.harmonics otherwise): model predictions. c should be valid;
// a growth rate that cannot be computed (no drag to derive a diffusivity
// from) is skipped, as the run reports it itself.
func (c Config) ResolutionWarnings() []*FieldError {
	var out []*FieldError
	h := float64(c.Grid.Spacing())
	lx, ly := c.Grid.Lengths()
	nx, ny := c.Grid.Size()
	// need returns the grid points along each side that give a spacing of
	// at most hMax, rounded up to even numbers.
	need := func(hMax float64) (int, int) {
		even := func(l Length) int { n := int(math.Ceil(float64(l) / hMax)); return n + n%2 }
		return max(even(lx), nx), max(even(ly), ny)
	}
	if c.Lipids.Model == "phase" {
		w := math.Sqrt2 * float64(c.Lipids.Interface)
		if pts := w / h; pts < interfacePoints {
			mx, my := need(w / interfacePoints)
			out = append(out, &FieldError{
				Key:   "lipids.interface",
				Value: c.valueText(theSchema().byKey["lipids.interface"], float64(c.Lipids.Interface)),
				Range: fmt.Sprintf("≥ %s on this grid (%d points across ε√2)", Length(interfacePoints*h/math.Sqrt2), interfacePoints),
				Err: fmt.Errorf("%w: the grid spacing %s puts %.3g points across the interface length ε√2 = %s; use at least %s grid points (or a wider interface)",
					ErrResolution, Length(h), pts, Length(w), sizeText(mx, my)),
			})
		}
	}
	kMin := 2 * math.Pi / math.Max(float64(lx), float64(ly)) / 100
	kGrid := math.Pi / h // the shortest wavelength of the grid is 2h
	check := func(what string, rate func(float64) float64) {
		peak, err := stability.Fastest(rate, kMin, 10*kGrid)
		if err != nil || !(peak.Rate > 0) || (peak.AtBound && peak.K == kMin) {
			return // nothing grows, or the longest wavelengths grow fastest
		}
		key, val := c.gridKey()
		pts := peak.Wavelength / h
		switch {
		case peak.AtBound:
			out = append(out, &FieldError{Key: key, Value: val,
				Range: "a grid whose shortest wavelengths are stable",
				Err: fmt.Errorf("%w: the growth rate of %s still rises at wavelength %s, %.2g grid spacings (model prediction): nothing limits it at short wavelengths, so no grid resolves it; check the diffusivities",
					ErrResolution, what, Length(peak.Wavelength), pts)})
		case pts < wavePoints:
			mx, my := need(peak.Wavelength / wavePoints)
			out = append(out, &FieldError{Key: key, Value: val,
				Range: fmt.Sprintf("≥ %s points (%d per fastest-growing wavelength)", sizeText(mx, my), wavePoints),
				Err: fmt.Errorf("%w: the fastest-growing wavelength %s of %s (linear stability, a model prediction) spans only %.3g grid spacings of %s",
					ErrResolution, Length(peak.Wavelength), what, pts, Length(h))})
		}
	}
	if c.Inclusions.Active() {
		if act, _, _, err := c.Stability(); err == nil {
			rate := act.Rate
			if c.Inclusions.Model == "kinetic" && act.Speed > 0 {
				if op, err := stability.NewKinetic(act, c.Inclusions.Harmonics); err == nil {
					rate = op.Rate
				} else {
					rate = nil
				}
			}
			if rate != nil {
				check("the active instability", rate)
			}
		}
	}
	if c.Lipids.Model == "phase" {
		ch := stability.CahnHilliard{Mobility: float64(c.Lipids.Diffusion), Width: float64(c.Lipids.Interface), Mean: c.Initial.Mean}
		check("spinodal decomposition of the lipids", ch.Rate)
	}
	return out
}

// gridKey returns the key that sets the coarser grid axis, and its value.
func (c Config) gridKey() (key, value string) {
	nx, ny := c.Grid.Size()
	lx, ly := c.Grid.Lengths()
	xCoarse := float64(lx)/float64(nx) >= float64(ly)/float64(ny)
	switch {
	case xCoarse && c.Grid.Nx.Valid:
		return "grid.nx", fmt.Sprint(nx)
	case !xCoarse && c.Grid.Ny.Valid:
		return "grid.ny", fmt.Sprint(ny)
	case xCoarse:
		return "grid.n", fmt.Sprint(nx)
	}
	return "grid.n", fmt.Sprint(ny)
}

func sizeText(nx, ny int) string { return fmt.Sprintf("%d×%d", nx, ny) }
