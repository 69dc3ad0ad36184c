package main

import (
	"fmt"
	"math"
	"path/filepath"
	"strings"

	"github.com/spf13/cobra"

	"github.com/memix-sim/memix/cmd/memix/internal/report"
	"github.com/memix-sim/memix/config"
	"github.com/memix-sim/memix/outputs"
	"github.com/memix-sim/memix/stability"
)

func init() { register(newStabilityCmd) }

// figureSamples is the number of wavenumbers of each curve in the figure.
const figureSamples = 256

// maxBoxRows caps the unstable box modes listed per branch.
const maxBoxRows = 8

// subphaseDepths are the wall depths of the built-in --subphases
// comparison: from a supported bilayer's gap to a chamber (MODEL.md §6).
var subphaseDepths = []float64{10e-9, 100e-9, 1e-6, 10e-6}

// cushionGap is the water gap whose friction η/h the --subphases
// comparison puts under the membrane (supported bilayers: 1–2 nm, MODEL.md
// §6, from memory).
const cushionGap = 1e-9

func newStabilityCmd(e *env) *cobra.Command {
	var out report.Flags
	var compare []string
	var subphases bool
	var figure, kminText, kmaxText string
	var points int
	cmd := &cobra.Command{
		Use:   "stability CONFIG",
		Short: "Growth rates of the uniform state and the instability they predict",
		Long: `stability computes the linear growth rates s(k) of the uniform isotropic state of the
configured active inclusions in the configured membrane and subphases: the closed form for
V₀ = 0, the kinetic operator with an angular truncation raised until the rates converge for
V₀ > 0 (the truncation and its last change are reported), and the moment model when
inclusions.model = moments. With lipids.model = phase it adds the Cahn–Hilliard branch of the
composition about initial.mean.

From each curve it derives the fastest-growing wavenumber and wavelength, its rate and
e-folding time 1/s, the band of unstable wavelengths, the critical active stress σ₀c₀ at which
the state first becomes unstable (as a dipole strength at the configured density and as a
density at the configured dipole), and the modes of the configured periodic box: whether one is
unstable, which, and the box's fastest mode.

--compare adds other configurations; --subphases adds built-in variants of this one whose
lower subphase is deep, a water layer over a wall at several depths, or a frictional cushion.
--figure writes s(k) of every configuration on a logarithmic k axis as a PNG.

Diffusivities not given in the configuration are computed as memix mobility does. Every value
is a model prediction of the linearised equations, not a measurement.`,
		Example: "  memix stability examples/free-patch.yaml\n  memix stability examples/free-patch.yaml --subphases --figure s.png\n  memix stability a.yaml --compare b.yaml --csv\n  memix stability a.yaml --kmin 0.1/um --kmax 100/um --points 50",
		Args:    cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			f, err := out.Format()
			if err != nil {
				return usageError{err}
			}
			if err := checkIntFlag("points", points, 2, 100000); err != nil {
				return err
			}
			path := args[0]
			c, err := loadConfig(path)
			if err != nil {
				return err
			}
			var kmin, kmax float64
			fl := cmd.Flags()
			if fl.Changed("kmin") {
				if kmin, err = parseQuantityFlag("kmin", kminText, dimWavenumber, 0, true); err != nil {
					return err
				}
			}
			if fl.Changed("kmax") {
				if kmax, err = parseQuantityFlag("kmax", kmaxText, dimWavenumber, 0, true); err != nil {
					return err
				}
			}

			// The configurations, each with its name.
			type named struct {
				name string
				cfg  config.Config
			}
			all := []named{{displayName(path), c}}
			for _, p := range compare {
				oc, err := loadConfig(p)
				if err != nil {
					return err
				}
				all = append(all, named{displayName(p), oc})
			}
			if subphases {
				vs, err := subphaseVariants(c)
				if err != nil {
					return err
				}
				for _, v := range vs {
					all = append(all, named{v.name, v.cfg})
				}
			}

			// One wavenumber interval for all: the flags, or the union of
			// the default intervals.
			lo, hi := math.Inf(1), 0.0
			for _, n := range all {
				act, _, ch, chOK, err := stabilityParams(n.cfg)
				if err != nil {
					return configError{n.name, err}
				}
				a, b := defaultKRange(n.cfg, act, n.cfg.Inclusions.Model != "none", ch, chOK)
				lo, hi = math.Min(lo, a), math.Max(hi, b)
			}
			if !fl.Changed("kmin") {
				kmin = lo
			}
			if !fl.Changed("kmax") {
				kmax = hi
			}
			if !(kmax > kmin) {
				return flagError("kmax", kmaxText, "1/m", "> --kmin = "+human(kmin, dimWavenumber), config.ErrRange)
			}
			var preds []*prediction
			for _, n := range all {
				p, err := predict(n.name, n.cfg, kmin, kmax, true)
				if err != nil {
					if config.IsConfigError(err) {
						return configError{n.name, err}
					}
					return err
				}
				preds = append(preds, p)
			}
			if figure != "" {
				if err := stabilityFigure(figure, preds); err != nil {
					return err
				}
			}
			return report.Write(cmd.OutOrStdout(), f, stabilityDoc(preds, points, figure))
		},
	}
	out.Bind(cmd.Flags())
	fl := cmd.Flags()
	fl.StringSliceVar(&compare, "compare", nil, "other configuration files to compare (repeat or separate with commas)")
	fl.BoolVar(&subphases, "subphases", false, "compare built-in variants of the lower subphase: deep, a wall at 10 nm, 100 nm, 1 µm and 10 µm, and a frictional cushion")
	fl.StringVar(&figure, "figure", "", "write a PNG of s(k) (log k axis) for every configuration to this path")
	fl.StringVar(&kminText, "kmin", "", "smallest wavenumber, e.g. 0.1/um (default: a tenth of the box's smallest)")
	fl.StringVar(&kmaxText, "kmax", "", "largest wavenumber, e.g. 1000/um (default: ten times the largest of the grid's Nyquist wavenumber and the cut-offs of the growth rates)")
	fl.IntVar(&points, "points", 25, "number of log-spaced wavenumbers in the table of s(k)")
	return cmd
}

// displayName is a configuration file's name in tables and legends.
func displayName(path string) string {
	return strings.TrimSuffix(filepath.Base(path), filepath.Ext(path))
}

type variant struct {
	name string
	cfg  config.Config
}

// subphaseVariants returns c with its lower subphase replaced: deep, a
// wall at each of subphaseDepths, and a frictional cushion (no lower fluid,
// friction η/h with h = cushionGap). The lower viscosity is the configured
// one, or water's 0.89 mPa·s when the lower side has no fluid.
func subphaseVariants(c config.Config) ([]variant, error) {
	eta := c.Subphase.Lower.Viscosity
	if c.Subphase.Lower.Kind == "none" {
		eta = 0.89e-3
	}
	with := func(name string, f func(*config.Config)) (variant, error) {
		v := c
		v.Subphase.Lower.Viscosity = eta
		v.Subphase.Lower.Depth = config.Optional[config.Length]{}
		f(&v)
		if err := v.Validate(); err != nil {
			return variant{}, configError{"--subphases variant " + name, err}
		}
		return variant{name, v}, nil
	}
	var vs []variant
	v, err := with("lower deep", func(v *config.Config) { v.Subphase.Lower.Kind = "deep" })
	if err != nil {
		return nil, err
	}
	vs = append(vs, v)
	for _, h := range subphaseDepths {
		v, err := with("lower wall at "+human(h, config.DimLength), func(v *config.Config) {
			v.Subphase.Lower.Kind = "wall"
			v.Subphase.Lower.Depth = config.Some(config.Length(h))
		})
		if err != nil {
			return nil, err
		}
		vs = append(vs, v)
	}
	xi := float64(eta) / cushionGap
	v, err = with("lower cushion ξ = "+human(xi, config.DimFriction), func(v *config.Config) {
		v.Subphase.Lower.Kind = "none"
		v.Membrane.Friction += config.Friction(xi)
	})
	if err != nil {
		return nil, err
	}
	return append(vs, v), nil
}

// rateCell is a growth rate.
func rateCell(s float64) report.Cell { return qcell(s, config.DimRate) }

func stabilityDoc(preds []*prediction, points int, figure string) report.Doc {
	p := preds[0]
	c := p.cfg
	fields := []report.Field{
		{Key: "config", Title: "configuration", Value: p.name},
		{Key: "membrane", Value: membraneText(c.FlowMembrane())},
	}
	if p.hasActive {
		kT := float64(c.KT())
		fields = append(fields,
			report.Field{Key: "inclusions", Value: fmt.Sprintf("%s, %s, dipole %s, density %s", c.Inclusions.Model, c.Inclusions.Kind,
				energyText(float64(c.Inclusions.Dipole), kT), human(float64(c.Inclusions.Density), config.DimAreaDensity))},
			report.Field{Key: "active_stress", Title: "active stress σ₀c₀", Value: qcell(p.act.Stress, config.DimTension)},
			report.Field{Key: "alignment", Title: "alignment β", Value: p.act.Alignment},
			report.Field{Key: "rot_diffusion", Title: "D_r", Value: qcell(p.act.RotDiff, config.DimRate)},
			report.Field{Key: "rot_diffusion_from", Title: "D_r from", Value: p.how[0]},
			report.Field{Key: "trans_diffusion", Title: "D_t", Value: qcell(p.act.TransDiff, config.DimDiffusivity)},
			report.Field{Key: "trans_diffusion_from", Title: "D_t from", Value: p.how[1]},
			report.Field{Key: "speed", Title: "V₀", Value: qcell(p.act.Speed, config.DimVelocity)},
		)
		if p.conv != nil {
			fields = append(fields,
				report.Field{Key: "truncation", Title: "angular truncation M", Value: p.conv.Modes},
				report.Field{Key: "truncation_change", Title: "largest change from M/2", Value: rateCell(p.conv.Change)})
		}
	}
	if p.hasCH {
		fields = append(fields,
			report.Field{Key: "lipid_mobility", Title: "lipid mobility M", Value: qcell(p.ch.Mobility, config.DimDiffusivity)},
			report.Field{Key: "interface", Title: "interface ε", Value: qcell(p.ch.Width, config.DimLength)},
			report.Field{Key: "mean_composition", Title: "φ₀", Value: p.ch.Mean})
	}
	fields = append(fields,
		report.Field{Key: "kmin", Title: "k from", Value: qcell(p.kmin, dimWavenumber)},
		report.Field{Key: "kmax", Title: "k to", Value: qcell(p.kmax, dimWavenumber)},
		report.Field{Key: "box", Value: fmt.Sprintf("%s × %s", human(p.lx, config.DimLength), human(p.ly, config.DimLength))},
		report.Field{Key: "grid_spacing", Title: "grid spacing", Value: qcell(p.spacing, config.DimLength)},
	)
	for _, b := range p.branches {
		fields = append(fields, report.Field{Key: "model_" + b.key, Title: "model (" + b.title + ")", Value: b.model})
	}
	if figure != "" {
		fields = append(fields, report.Field{Key: "figure", Value: figure})
	}

	// s(k): every branch of the first configuration, then the first
	// branch of every other.
	rates := &report.Table{
		Key:   "rates",
		Title: "Growth rates s(k) of the uniform isotropic state (model predictions)",
		Columns: []report.Column{
			qcol("k", "k", dimWavenumber),
			qcol("wavelength", "wavelength 2π/k", config.DimLength),
		},
		Notes: []string{predictionNote, "s > 0: the mode grows as e^{st}."},
	}
	type curve struct {
		p *prediction
		b *branch
	}
	var curves []curve
	for _, b := range p.branches {
		curves = append(curves, curve{p, b})
		rates.Columns = append(rates.Columns, qcol("rate_"+b.key, "s "+b.title, config.DimRate))
	}
	for i, q := range preds[1:] {
		curves = append(curves, curve{q, q.branches[0]})
		rates.Columns = append(rates.Columns, qcol(fmt.Sprintf("rate_%d", i+2), "s "+q.name, config.DimRate))
	}
	for _, k := range logSpace(p.kmin, p.kmax, points) {
		row := []any{qcell(k, dimWavenumber), qcell(2*math.Pi/k, config.DimLength)}
		for _, cv := range curves {
			row = append(row, rateCell(cv.b.rate(k)))
		}
		rates.Rows = append(rates.Rows, row)
	}

	tables := []*report.Table{rates, answersTable(p), boxTable(p)}
	if len(preds) > 1 {
		tables = append(tables, compareTable(preds))
	}
	return report.Doc{Fields: fields, Tables: tables}
}

// unstableRange returns the shortest and longest unstable wavelength over
// every band, and whether a band reaches the end of the interval.
func unstableRange(bands []stability.Band) (short, long float64, open bool) {
	short, long = math.Inf(1), 0
	for _, b := range bands {
		s, l := b.Wavelengths()
		short, long = math.Min(short, s), math.Max(long, l)
		open = open || b.LoOpen || b.HiOpen
	}
	return
}

// criticalValues returns the critical active stress and what it means
// at the configured density and dipole (NaN where there is none).
func criticalValues(p *prediction, b *branch) (stress, dipole, density float64) {
	stress, dipole, density = math.NaN(), math.NaN(), math.NaN()
	if b.crit == nil {
		return
	}
	stress = b.crit.Stress
	dipole = math.Abs(stress) / float64(p.cfg.Inclusions.Density)
	if d := float64(p.cfg.Inclusions.Dipole); d > 0 {
		density = math.Abs(stress) / d
	}
	return
}

func answersTable(p *prediction) *report.Table {
	t := &report.Table{
		Key:     "answers",
		Title:   "Predicted instability",
		Columns: []report.Column{{Key: "quantity"}, {Key: "unit", Title: "SI unit"}},
		Notes:   []string{predictionNote},
	}
	for _, b := range p.branches {
		t.Columns = append(t.Columns, report.Column{Key: b.key, Title: b.title})
	}
	kT := float64(p.cfg.KT())
	row := func(key, title, unit string, cell func(b *branch) any) {
		r := []any{report.Cell{Value: key, Text: title}, unit}
		for _, b := range p.branches {
			r = append(r, cell(b))
		}
		t.Rows = append(t.Rows, r)
	}
	none := report.Cell{Value: nil, Text: "–"}
	row("fastest_k", "fastest-growing wavenumber k*", "1/m", func(b *branch) any { return qcell(b.peak.K, dimWavenumber) })
	row("fastest_wavelength", "fastest-growing wavelength 2π/k*", "m", func(b *branch) any { return qcell(b.peak.Wavelength, config.DimLength) })
	row("fastest_rate", "its growth rate s(k*)", "1/s", func(b *branch) any { return rateCell(b.peak.Rate) })
	row("growth_time", "its e-folding time 1/s(k*)", "s", func(b *branch) any {
		if b.peak.Rate <= 0 {
			return report.Cell{Value: nil, Text: "none (stable)"}
		}
		return qcell(1/b.peak.Rate, config.DimTime)
	})
	row("peak_at_bound", "maximum at the end of the k interval", "", func(b *branch) any { return b.peak.AtBound })
	row("unstable", "unstable (some s > 0)", "", func(b *branch) any { return len(b.bands) > 0 })
	row("band_shortest", "shortest unstable wavelength", "m", func(b *branch) any {
		if len(b.bands) == 0 {
			return none
		}
		s, _, _ := unstableRange(b.bands)
		return qcell(s, config.DimLength)
	})
	row("band_longest", "longest unstable wavelength", "m", func(b *branch) any {
		if len(b.bands) == 0 {
			return none
		}
		_, l, _ := unstableRange(b.bands)
		return qcell(l, config.DimLength)
	})
	row("band_open", "band reaches the end of the k interval", "", func(b *branch) any {
		_, _, o := unstableRange(b.bands)
		return o
	})
	row("critical_stress", "critical active stress σ₀c₀", "N/m", func(b *branch) any {
		s, _, _ := criticalValues(p, b)
		if math.IsNaN(s) {
			return none
		}
		return qcell(s, config.DimTension)
	})
	row("critical_dipole", "critical dipole |σ₀| at the configured density", "J", func(b *branch) any {
		_, d, _ := criticalValues(p, b)
		if math.IsNaN(d) {
			return none
		}
		return report.Cell{Value: d, Text: energyText(d, kT)}
	})
	row("critical_density", "critical density c₀ at the configured dipole", "1/m^2", func(b *branch) any {
		_, _, n := criticalValues(p, b)
		if math.IsNaN(n) {
			return none
		}
		return qcell(n, config.DimAreaDensity)
	})
	row("critical_wavelength", "first unstable wavelength at threshold", "m", func(b *branch) any {
		if b.crit == nil {
			return none
		}
		return qcell(b.crit.Peak.Wavelength, config.DimLength)
	})
	row("box_unstable_modes", "unstable modes of the box", "", func(b *branch) any { return b.unstable })
	row("box_fastest_mode", "fastest mode of the box (nx, ny)", "", func(b *branch) any {
		if len(b.box) == 0 {
			return none
		}
		return fmt.Sprintf("(%d, %d)", b.box[0].Nx, b.box[0].Ny)
	})
	row("box_fastest_wavelength", "its wavelength", "m", func(b *branch) any {
		if len(b.box) == 0 {
			return none
		}
		return qcell(2*math.Pi/b.box[0].K, config.DimLength)
	})
	row("box_fastest_rate", "its growth rate", "1/s", func(b *branch) any {
		if len(b.box) == 0 {
			return none
		}
		return rateCell(b.box[0].Rate)
	})
	row("points_per_wavelength", "grid points per fastest wavelength", "", func(b *branch) any { return p.pointsPerWavelength(b) })

	for _, b := range p.branches {
		if b.crit == nil && b.critNote != "" {
			t.Notes = append(t.Notes, b.title+": "+b.critNote+".")
		}
		if b.crit != nil && p.act.Stress != 0 && math.Signbit(b.crit.Stress) != math.Signbit(p.act.Stress) {
			need := "extensile"
			if b.crit.Stress > 0 {
				need = "contractile"
			}
			t.Notes = append(t.Notes, fmt.Sprintf("%s: with β = %g only %s inclusions can destabilise the isotropic state; the configured ones are %s.", b.title, p.act.Alignment, need, p.cfg.Inclusions.Kind))
		}
		if b.peak.AtBound && b.peak.Rate > 0 {
			t.Notes = append(t.Notes, fmt.Sprintf("%s: the largest rate is at an end of the k interval; widen it with --kmin/--kmax.", b.title))
		}
		t.Notes = append(t.Notes, b.title+": "+verdict(p, b))
	}
	return t
}

// verdict says in words what b predicts for the configured box and grid.
func verdict(p *prediction, b *branch) string {
	if len(b.bands) == 0 {
		if b.unstable > 0 {
			return fmt.Sprintf("no unstable band found on the interval, yet %d box modes grow; widen the interval.", b.unstable)
		}
		return fmt.Sprintf("predicted stable: this mode decays at every wavenumber of the interval (its largest rate is %s).", human(b.peak.Rate, config.DimRate))
	}
	s := fmt.Sprintf("predicted unstable: fastest growth at wavelength %s, e-folding time %s; ",
		human(b.peak.Wavelength, config.DimLength), human(1/b.peak.Rate, config.DimTime))
	if b.unstable == 0 {
		return s + "but " + p.noBoxMode(b) + "."
	}
	m := b.box[0]
	return s + fmt.Sprintf("the box holds %d unstable modes, fastest (%d, %d) at wavelength %s.",
		b.unstable, m.Nx, m.Ny, human(2*math.Pi/m.K, config.DimLength))
}

func boxTable(p *prediction) *report.Table {
	t := &report.Table{
		Key:   "box_modes",
		Title: "Unstable modes of the periodic box (the fastest mode if none)",
		Columns: []report.Column{
			{Key: "branch"},
			{Key: "nx"}, {Key: "ny"},
			qcol("k", "k", dimWavenumber),
			qcol("wavelength", "wavelength", config.DimLength),
			qcol("rate", "rate", config.DimRate),
		},
	}
	for _, b := range p.branches {
		if b.key == "moment" && len(p.branches) > 0 && p.branches[0].key == "active" {
			continue // at V₀ = 0 its unstable modes are those of the closed form
		}
		n := max(b.unstable, 1)
		for i, m := range b.box[:min(n, len(b.box))] {
			if i == maxBoxRows {
				t.Notes = append(t.Notes, fmt.Sprintf("%s: %d more unstable modes not listed.", b.title, b.unstable-maxBoxRows))
				break
			}
			t.Rows = append(t.Rows, []any{b.key, m.Nx, m.Ny, qcell(m.K, dimWavenumber), qcell(2*math.Pi/m.K, config.DimLength), rateCell(m.Rate)})
		}
	}
	return t
}

func compareTable(preds []*prediction) *report.Table {
	t := &report.Table{
		Key:   "comparison",
		Title: "Comparison (first branch of each configuration; model predictions)",
		Columns: []report.Column{
			{Key: "config", Title: "configuration"},
			{Key: "lower", Title: "lower subphase"},
			qcol("rot_diffusion", "D_r", config.DimRate),
			qcol("trans_diffusion", "D_t", config.DimDiffusivity),
			qcol("fastest_wavelength", "fastest λ", config.DimLength),
			qcol("fastest_rate", "rate", config.DimRate),
			qcol("band_shortest", "shortest unstable λ", config.DimLength),
			qcol("band_longest", "longest unstable λ", config.DimLength),
			qcol("critical_stress", "critical σ₀c₀", config.DimTension),
			{Key: "box_unstable_modes", Title: "unstable box modes"},
		},
	}
	for _, p := range preds {
		b := p.branches[0]
		lo := p.cfg.Subphase.Lower
		lower := lo.Kind
		if lo.Depth.Valid {
			lower += " " + human(float64(lo.Depth.V), config.DimLength)
		}
		if p.cfg.Membrane.Friction > 0 {
			lower += ", ξ = " + human(float64(p.cfg.Membrane.Friction), config.DimFriction)
		}
		short, long := math.NaN(), math.NaN()
		if len(b.bands) > 0 {
			short, long, _ = unstableRange(b.bands)
		}
		crit, _, _ := criticalValues(p, b)
		t.Rows = append(t.Rows, []any{p.name, lower, qcell(p.act.RotDiff, config.DimRate), qcell(p.act.TransDiff, config.DimDiffusivity),
			qcell(b.peak.Wavelength, config.DimLength), rateCell(b.peak.Rate),
			nanCell(short, config.DimLength), nanCell(long, config.DimLength), nanCell(crit, config.DimTension), b.unstable})
	}
	return t
}

// nanCell is qcell with NaN shown as "–".
func nanCell(v float64, d config.Dim) report.Cell {
	if math.IsNaN(v) {
		return report.Cell{Value: nil, Text: "–"}
	}
	return qcell(v, d)
}

// stabilityFigure draws s(k) of every branch of the first configuration
// and the first branch of every other, k in 1/µm on a log axis.
func stabilityFigure(path string, preds []*prediction) error {
	p := preds[0]
	ks := logSpace(p.kmin, p.kmax, figureSamples)
	x := make([]float64, len(ks))
	for i, k := range ks {
		x[i] = k * 1e-6
	}
	var curves []outputs.Curve
	top := math.Inf(-1)
	add := func(label string, b *branch) {
		y := make([]float64, len(ks))
		for i, k := range ks {
			y[i] = b.rate(k)
		}
		curves = append(curves, outputs.Curve{Label: label, X: x, Y: y})
		top = math.Max(top, b.peak.Rate)
	}
	for _, b := range p.branches {
		label := p.name
		if len(p.branches) > 1 {
			label += ": " + b.title
		}
		add(label, b)
	}
	for _, q := range preds[1:] {
		add(q.name, q.branches[0])
	}
	// Show the peaks and the zero line; the large-k decay would flatten
	// everything else.
	y := outputs.Axis{Label: "growth rate s", Unit: "1/s"}
	if top > 0 {
		y.Min, y.Max = -1.0*top, 1.15*top
	} else {
		y.Min, y.Max = 4*top, -0.5*top
	}
	curves = append(curves, outputs.Curve{X: []float64{x[0], x[len(x)-1]}, Y: []float64{0, 0}})
	return outputs.Lines(path, curves, outputs.Frame{
		Title: "Growth rate of the uniform state (model prediction)",
		X:     outputs.Axis{Label: "wavenumber k", Unit: "1/µm", Log: true},
		Y:     y,
	})
}
