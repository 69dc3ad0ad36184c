package main

import (
	"fmt"
	"math"

	"github.com/memix-sim/memix/cmd/memix/internal/report"
	"github.com/memix-sim/memix/config"
	"github.com/memix-sim/memix/flow"
)

// minPointsPerWavelength is the fewest grid points per fastest-growing
// wavelength memix check accepts without a warning: a pseudo-spectral grid
// needs at least two (Nyquist), and four keep the mode away from the
// dealiased band edge (2/3 of Nyquist) with room for its harmonics
// [practice; no source].
const minPointsPerWavelength = 4

// checkInstability returns the advice memix check adds about the predicted
// instability and the viscosity contrast, and a table of the predicted
// instability (nil if there is nothing to predict).
func checkInstability(c config.Config) (advice [][]any, table *report.Table) {
	level := func(l config.Level) string { return l.String() }
	if c.Membrane.Variable() {
		plus, minus := c.Membrane.PhaseViscosities()
		rule, err := flow.ParseViscosityRule(c.Membrane.Rule)
		if err == nil {
			law := flow.ViscosityLaw{Rule: rule, PhaseA: float64(plus), PhaseB: float64(minus)}
			k := law.Contrast()
			// CG needs about ½·sqrt(κ)·ln(2/tol) iterations for condition
			// number κ ≤ contrast (see flow.DefaultPCGMaxIterations).
			iters := 0.5 * math.Sqrt(k) * math.Log(2/c.Membrane.Tolerance)
			l, text := config.Note, fmt.Sprintf("viscosity contrast η₊/η₋ = %s/%s = %s (%s rule): the iterative flow solve needs about %.0f iterations per step (cap membrane.solver_iterations = %d)",
				plus, minus, report.FormatFloat(k), c.Membrane.Rule, math.Ceil(iters), c.Membrane.MaxIter)
			if iters > float64(c.Membrane.MaxIter) {
				l, text = config.Warn, text+"; raise the cap or lower the contrast"
			}
			advice = append(advice, []any{level(l), text})
		}
	}
	if c.Inclusions.Model == "none" && c.Lipids.Model != "phase" {
		return advice, nil
	}
	p, err := predict("config", c, 0, 0, false)
	if err != nil {
		return append(advice, []any{level(config.Note), "no instability predicted: " + err.Error()}), nil
	}
	table = &report.Table{
		Key:   "instability",
		Title: "Predicted instability of the uniform state (model predictions; see memix stability)",
		Columns: []report.Column{
			{Key: "branch"},
			{Key: "unstable"},
			qcol("fastest_wavelength", "fastest λ", config.DimLength),
			qcol("fastest_rate", "rate", config.DimRate),
			{Key: "points_per_wavelength", Title: "grid points per λ"},
			{Key: "box_unstable_modes", Title: "unstable box modes"},
			{Key: "box_fastest_mode", Title: "box's fastest mode"},
			qcol("box_fastest_rate", "its rate", config.DimRate),
		},
	}
	for _, b := range p.branches {
		if b.key == "moment" {
			continue // the same instability as the active branch at V₀ = 0
		}
		m := b.box[0]
		table.Rows = append(table.Rows, []any{b.title, len(b.bands) > 0, qcell(b.peak.Wavelength, config.DimLength), rateCell(b.peak.Rate),
			p.pointsPerWavelength(b), b.unstable, fmt.Sprintf("(%d, %d)", m.Nx, m.Ny), rateCell(m.Rate)})
		if len(b.bands) == 0 {
			advice = append(advice, []any{level(config.OK), fmt.Sprintf("%s: uniform state predicted stable (the largest growth rate of this mode is %s)", b.title, human(b.peak.Rate, config.DimRate))})
			continue
		}
		n := p.pointsPerWavelength(b)
		text := fmt.Sprintf("%s: predicted unstable, fastest wavelength %s (rate %s, e-folding %s); the grid puts %.3g points on it",
			b.title, human(b.peak.Wavelength, config.DimLength), human(b.peak.Rate, config.DimRate), human(1/b.peak.Rate, config.DimTime), n)
		l := config.OK
		if n < minPointsPerWavelength {
			l = config.Warn
			text += fmt.Sprintf(", fewer than %d: refine the grid to a spacing of at most %s", minPointsPerWavelength,
				human(b.peak.Wavelength/minPointsPerWavelength, config.DimLength))
		}
		advice = append(advice, []any{level(l), text})
		if b.unstable > 0 {
			advice = append(advice, []any{level(config.OK), fmt.Sprintf("%s: the box holds %d unstable modes, fastest (%d, %d) at wavelength %s",
				b.title, b.unstable, m.Nx, m.Ny, human(2*math.Pi/m.K, config.DimLength))})
		} else {
			advice = append(advice, []any{level(config.Note), b.title + ": " + p.noBoxMode(b)})
		}
	}
	return advice, table
}
