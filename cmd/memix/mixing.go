package main

import (
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"github.com/spf13/cobra"

	"github.com/memix-sim/memix/cmd/memix/internal/report"
	"github.com/memix-sim/memix/config"
	"github.com/memix-sim/memix/mixing"
	"github.com/memix-sim/memix/outputs"
	"github.com/memix-sim/memix/spectral"
)

func init() { register(newMixingCmd) }

// mixField is the field whose mixing memix mixing measures.
const mixField = "phi"

// normInfo describes one mixing norm for output: keys, titles and the
// power p of the length unit its values carry (value_SI = value·ℓ₀^p).
var normInfo = [mixing.NumNorms]struct {
	key, title, plain, unit string
	p                       float64
}{
	mixing.Variance:   {"variance", "variance norm (std. dev.)", "variance norm (std. dev.)", "1", 0},
	mixing.HMinus1:    {"h_minus1", "H⁻¹ norm", "H^-1 norm", "m", 1},
	mixing.HMinusHalf: {"h_minus_half", "H^-1/2 norm", "H^-1/2 norm", "m^0.5", 0.5},
	mixing.Mix:        {"mix", "mix-norm", "mix-norm", "1", 0},
}

func newMixingCmd(e *env) *cobra.Command {
	var out report.Flags
	var windowText string
	var threshold float64
	var figures bool
	var spectra int
	cmd := &cobra.Command{
		Use:   "mixing OUTDIR",
		Short: "Recompute the mixing measures of a finished run from its snapshots",
		Long: `mixing reads the lipid composition phi of every snapshot of a run (OUTDIR, or its snapshot
index snapshots.h5) and recomputes the mixing measures of its mean-free part: the variance
norm, the H⁻¹ and H^-1/2 norms and the mix-norm (weight (1 + k²L²)^-1/2, L = output.mix_length
of the run) over time and as ratios to their initial values; exponential (A e^{−λt}) and power
law (C t^α) fits of each norm, over --window t0:t1 (times with units; a bare number is in
seconds) or a window chosen automatically (reported); the time at which each norm first falls
to --threshold times its initial value; the radially averaged structure factor S(k) at
--spectra times; and the domain length L(t) = 2π/⟨k⟩.

--figures writes mixing-norms.png (ratios over time, log scale), mixing-spectra.png (S(k) at the
chosen times) and mixing-length.png (L(t)) into OUTDIR/figures. The values describe a
simulation: model predictions, not measurements.`,
		Example: "  memix mixing run-out\n  memix mixing run-out --threshold 0.01 --window 0.1s:2s --json\n  memix mixing run-out --figures --spectra 6",
		Args:    cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			f, err := out.Format()
			if err != nil {
				return usageError{err}
			}
			if !(threshold > 0 && threshold < 1) {
				return flagError("threshold", strconv.FormatFloat(threshold, 'g', -1, 64), "", "(0, 1)", config.ErrRange)
			}
			if err := checkIntFlag("spectra", spectra, 0, 1000); err != nil {
				return err
			}
			var win mixing.Window
			if windowText != "" {
				if win, err = parseWindow(windowText); err != nil {
					return err
				}
			}
			path, err := outputFile(args[0])
			if err != nil {
				return err
			}
			m, err := measureRun(path)
			if err != nil {
				return err
			}
			if !cmd.Flags().Changed("threshold") && m.cfgThreshold > 0 {
				threshold = m.cfgThreshold
			}
			if err := m.analyse(win, threshold, spectra); err != nil {
				return err
			}
			var figDir string
			if figures {
				figDir = filepath.Join(filepath.Dir(path), "figures")
				if err := m.figures(figDir); err != nil {
					return err
				}
			}
			return report.Write(cmd.OutOrStdout(), f, m.doc(figDir))
		},
	}
	out.Bind(cmd.Flags())
	fl := cmd.Flags()
	fl.Float64Var(&threshold, "threshold", 0.1, "fraction of the initial value a norm must reach (default: output.threshold of the run, else 0.1)")
	fl.StringVar(&windowText, "window", "", "time window t0:t1 of the decay fits, e.g. 0.1s:2s (default: chosen automatically)")
	fl.BoolVar(&figures, "figures", false, "write mixing-norms.png, mixing-spectra.png and mixing-length.png into OUTDIR/figures")
	fl.IntVar(&spectra, "spectra", 4, "number of times (evenly spread over the snapshots) at which to report S(k)")
	return cmd
}

// parseWindow parses "t0:t1" into a fit window in seconds.
func parseWindow(s string) (mixing.Window, error) {
	a, b, ok := strings.Cut(s, ":")
	if !ok {
		return mixing.Window{}, flagError("window", s, "s", "t0:t1 with 0 ≤ t0 < t1, e.g. 0.1s:2s", fmt.Errorf("%w: no colon", config.ErrSyntax))
	}
	t0, err := parseQuantityFlag("window", a, config.DimTime, 0, false)
	if err != nil {
		return mixing.Window{}, err
	}
	t1, err := parseQuantityFlag("window", b, config.DimTime, 0, true)
	if err != nil {
		return mixing.Window{}, err
	}
	if !(t0 >= 0 && t1 > t0) {
		return mixing.Window{}, flagError("window", s, "s", "t0:t1 with 0 ≤ t0 < t1", config.ErrRange)
	}
	return mixing.Window{Start: t0, End: t1}, nil
}

// runMixing holds the measures of one run.
type runMixing struct {
	path         string
	scales       outputs.Scales
	grid         *spectral.Grid // reduced lengths
	mixLength    float64        // reduced
	mixLengthSrc string
	cfgThreshold float64

	t, tSI []float64
	steps  []int64
	norms  [mixing.NumNorms][]float64 // SI
	length []float64                  // domain length, SI

	spec      *mixing.Spectrum
	specAt    []int       // snapshot indices of the spectra
	specs     [][]float64 // S(k) in SI (φ²·m²) per chosen snapshot
	phiSpectr [][]complex128

	// Analysis.
	window    mixing.Window
	threshold float64
	ratios    [mixing.NumNorms][]float64
	exp       [mixing.NumNorms]*mixing.ExpFit
	expErr    [mixing.NumNorms]error
	pow       [mixing.NumNorms]*mixing.PowerFit
	powErr    [mixing.NumNorms]error
	reach     [mixing.NumNorms]float64 // NaN if not reached
}

// measureRun reads phi from every snapshot of the index at path and
// measures it.
func measureRun(path string) (*runMixing, error) {
	f, err := outputs.Open(path)
	if err != nil {
		return nil, inputError{"", err}
	}
	defer f.Close()
	if f.Kind() != outputs.KindSnapshotIndex {
		return nil, inputError{path, fmt.Errorf("a %s, not a snapshot index: give the run's output directory or its %s", f.Kind(), outputs.SnapshotIndexName)}
	}
	snaps := f.Snapshots()
	if len(snaps) == 0 {
		return nil, inputError{path, errors.New("no snapshots")}
	}
	for i, s := range snaps {
		found := false
		for _, fi := range s.Fields {
			found = found || fi.Name == mixField
		}
		if !found {
			return nil, inputError{path, fmt.Errorf("snapshot %d (step %d) has no field %s (it has %s)", i, s.Step, mixField, fieldsText(s.Fields))}
		}
	}
	gi := f.Grid()
	g, err := spectral.NewGrid(gi.Nx, gi.Ny, gi.Lx, gi.Ly)
	if err != nil {
		return nil, inputError{path, err}
	}
	sc := f.Info().Scales
	m := &runMixing{path: path, scales: sc, grid: g, mixLength: gi.Lx, mixLengthSrc: "the box length lx (no readable configuration recorded)"}
	if c, err := config.Parse([]byte(f.Info().Config), path+" (recorded configuration)"); err == nil {
		lx, _ := c.Grid.Lengths()
		m.mixLength = float64(c.Output.MixLength.Or(lx)) / sc.Length
		m.mixLengthSrc = "output.mix_length of the run"
		if !c.Output.MixLength.Valid {
			m.mixLengthSrc = "grid.lx of the run (output.mix_length not set)"
		}
		m.cfgThreshold = c.Output.Threshold
	}
	meter, err := mixing.NewMeter(g, m.mixLength)
	if err != nil {
		return nil, err
	}
	m.spec = mixing.NewSpectrum(g)
	plan, err := spectral.NewPlan(g, spectral.Options{})
	if err != nil {
		return nil, err
	}
	defer plan.Close()
	phi, hat := g.NewReal(), g.NewSpectral()
	l := sc.Length
	for i, s := range snaps {
		if _, err := f.ReadField(phi, mixField, i); err != nil {
			return nil, inputError{"", err}
		}
		for j, v := range phi {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, inputError{path, fmt.Errorf("snapshot %d (step %d): %s is not finite at grid point (%d, %d)", i, s.Step, mixField, j%g.Nx, j/g.Nx)}
			}
		}
		plan.Forward(hat, phi)
		v := meter.Measure(hat)
		m.t, m.tSI, m.steps = append(m.t, s.Time), append(m.tSI, s.TimeSI), append(m.steps, s.Step)
		for n := range v {
			m.norms[n] = append(m.norms[n], v[n]*math.Pow(l, normInfo[n].p))
		}
		m.length = append(m.length, m.spec.DomainLength(hat)*l)
		m.phiSpectr = append(m.phiSpectr, append([]complex128(nil), hat...))
	}
	return m, nil
}

// analyse computes ratios, fits, threshold times and the spectra at
// nSpec snapshots.
func (m *runMixing) analyse(win mixing.Window, threshold float64, nSpec int) error {
	m.window, m.threshold = win, threshold
	n := len(m.tSI)
	for k := range m.norms {
		m.ratios[k] = make([]float64, n)
		m.reach[k] = math.NaN()
		if err := mixing.Ratios(m.ratios[k], m.norms[k]); err != nil {
			m.expErr[k], m.powErr[k] = fmt.Errorf("no ratios: %w", err), fmt.Errorf("no ratios: %w", err)
			continue
		}
		if tc, ok := mixing.Reach(m.tSI, m.ratios[k], threshold); ok {
			m.reach[k] = tc
		}
		if e, err := mixing.FitExp(m.tSI, m.norms[k], win); err == nil {
			m.exp[k] = &e
		} else {
			m.expErr[k] = err
		}
		if p, err := mixing.FitPower(m.tSI, m.norms[k], win); err == nil {
			m.pow[k] = &p
		} else {
			m.powErr[k] = err
		}
	}
	// The spectra: nSpec snapshots spread evenly, first and last included.
	m.specAt = nil
	for i := 0; i < nSpec && i < n; i++ {
		j := 0
		if nSpec > 1 && n > 1 {
			j = int(math.Round(float64(i) * float64(n-1) / float64(min(nSpec, n)-1)))
		}
		if len(m.specAt) == 0 || m.specAt[len(m.specAt)-1] != j {
			m.specAt = append(m.specAt, j)
		}
	}
	l2 := m.scales.Length * m.scales.Length
	m.specs = nil
	for _, j := range m.specAt {
		s := make([]float64, m.spec.Shells())
		m.spec.StructureFactor(s, m.phiSpectr[j])
		for b := range s {
			if m.spec.Count(b) == 0 {
				s[b] = math.NaN()
			}
			s[b] *= l2
		}
		m.specs = append(m.specs, s)
	}
	return nil
}

func (m *runMixing) doc(figDir string) report.Doc {
	sc := m.scales
	fields := []report.Field{
		{Key: "snapshots", Value: m.path},
		{Key: "snapshot_count", Title: "snapshots read", Value: len(m.tSI)},
		{Key: "field", Value: mixField},
		{Key: "grid", Value: fmt.Sprintf("%d×%d", m.grid.Nx, m.grid.Ny)},
		{Key: "box", Value: fmt.Sprintf("%s × %s", human(m.grid.Lx*sc.Length, config.DimLength), human(m.grid.Ly*sc.Length, config.DimLength))},
		{Key: "mix_length", Title: "mix-norm length L", Value: qcell(m.mixLength*sc.Length, config.DimLength)},
		{Key: "mix_length_from", Title: "L from", Value: m.mixLengthSrc},
		{Key: "threshold", Value: m.threshold},
	}
	if m.window != (mixing.Window{}) {
		fields = append(fields, report.Field{Key: "window", Title: "fit window", Value: fmt.Sprintf("%s to %s (given)", human(m.window.Start, config.DimTime), human(m.window.End, config.DimTime))})
	} else {
		fields = append(fields, report.Field{Key: "window", Title: "fit window", Value: "automatic (see the fits)"})
	}
	if figDir != "" {
		fields = append(fields, report.Field{Key: "figures", Value: figDir})
	}

	norms := &report.Table{
		Key:   "norms",
		Title: "Mixing norms of the mean-free composition (simulation: model predictions)",
		Columns: []report.Column{
			{Key: "time", Unit: sc.TimeUnit},
			qcol("time_si", "time", config.DimTime),
			{Key: "step"},
		},
	}
	ratios := &report.Table{
		Key:     "ratios",
		Title:   "Norms relative to t = 0",
		Columns: []report.Column{qcol("time_si", "time", config.DimTime)},
	}
	for _, ni := range normInfo {
		norms.Columns = append(norms.Columns, report.Column{Key: ni.key, Title: ni.title, Unit: ni.unit})
		ratios.Columns = append(ratios.Columns, report.Column{Key: ni.key, Title: ni.title})
	}
	norms.Columns = append(norms.Columns, qcol("domain_length", "domain length L(t)", config.DimLength))
	for i := range m.tSI {
		r := []any{m.t[i], qcell(m.tSI[i], config.DimTime), int(m.steps[i])}
		q := []any{qcell(m.tSI[i], config.DimTime)}
		for k := range m.norms {
			r = append(r, m.norms[k][i])
			q = append(q, m.ratios[k][i])
		}
		r = append(r, qcell(m.length[i], config.DimLength))
		norms.Rows = append(norms.Rows, r)
		ratios.Rows = append(ratios.Rows, q)
	}
	norms.Notes = []string{fmt.Sprintf("Norm weights: 1, 1/k², 1/k and (1 + k²L²)^-1/2 with L = %s (MODEL.md §4); each norm is the square root of the weighted sum over k ≠ 0.", human(m.mixLength*sc.Length, config.DimLength))}

	fits := &report.Table{
		Key:   "fits",
		Title: "Decay fits: exponential A·e^{−λt} and power law C·t^α (least squares on the logarithm)",
		Columns: []report.Column{
			{Key: "norm"},
			{Key: "law"},
			{Key: "rate_or_exponent", Title: "λ [1/s] or α"},
			{Key: "prefactor", Title: "A or C"},
			qcol("from", "window from", config.DimTime),
			qcol("to", "to", config.DimTime),
			{Key: "samples"},
			{Key: "auto", Title: "window chosen automatically"},
			{Key: "residual", Title: "residual (std. dev. of ln)"},
		},
	}
	none := report.Cell{Value: nil, Text: "–"}
	for k, ni := range normInfo {
		if e := m.exp[k]; e != nil {
			fits.Rows = append(fits.Rows, []any{ni.key, "exponential", e.Rate, e.Amplitude, qcell(e.Start, config.DimTime), qcell(e.End, config.DimTime), e.To - e.From, e.Auto, e.Residual})
		} else {
			fits.Rows = append(fits.Rows, []any{ni.key, "exponential", none, none, none, none, 0, m.window == (mixing.Window{}), none})
			fits.Notes = append(fits.Notes, fmt.Sprintf("%s, exponential: %v", ni.key, m.expErr[k]))
		}
		if p := m.pow[k]; p != nil {
			fits.Rows = append(fits.Rows, []any{ni.key, "power law", p.Exponent, p.Prefactor, qcell(p.Start, config.DimTime), qcell(p.End, config.DimTime), p.To - p.From, p.Auto, p.Residual})
		} else {
			fits.Rows = append(fits.Rows, []any{ni.key, "power law", none, none, none, none, 0, m.window == (mixing.Window{}), none})
			fits.Notes = append(fits.Notes, fmt.Sprintf("%s, power law: %v", ni.key, m.powErr[k]))
		}
	}
	fits.Notes = append(fits.Notes, "The prefactors carry the units of the norm (SI) and, for the power law, s^-α.")

	reach := &report.Table{
		Key:   "threshold_times",
		Title: fmt.Sprintf("Time for each norm to fall to %g of its initial value", m.threshold),
		Columns: []report.Column{
			{Key: "norm"},
			{Key: "reached"},
			qcol("time_si", "time", config.DimTime),
		},
		Notes: []string{"Interpolated linearly in the logarithm between the two snapshots that bracket the crossing (exact for an exponential decay)."},
	}
	for k, ni := range normInfo {
		if math.IsNaN(m.reach[k]) {
			reach.Rows = append(reach.Rows, []any{ni.key, false, report.Cell{Value: nil, Text: "not within the run"}})
		} else {
			reach.Rows = append(reach.Rows, []any{ni.key, true, qcell(m.reach[k], config.DimTime)})
		}
	}

	tables := []*report.Table{norms, ratios, fits, reach}
	if len(m.specAt) > 0 {
		st := &report.Table{
			Key:     "spectra",
			Title:   "Radially averaged structure factor S(k) (φ² × area)",
			Columns: []report.Column{qcol("k", "k", dimWavenumber)},
			Notes:   []string{"Shells of width 2π/max(lx, ly) centred on k; S = (LxLy/N_shell) Σ|φ_k|² over the shell (package mixing)."},
		}
		for _, j := range m.specAt {
			st.Columns = append(st.Columns, qcol(fmt.Sprintf("s_%d", j), "S at t = "+human(m.tSI[j], config.DimTime), config.DimArea))
		}
		for b := 0; b < m.spec.Shells(); b++ {
			r := []any{qcell(m.spec.K(b)/m.scales.Length, dimWavenumber)}
			for i := range m.specAt {
				r = append(r, nanCell(m.specs[i][b], config.DimArea))
			}
			st.Rows = append(st.Rows, r)
		}
		tables = append(tables, st)
	}
	return report.Doc{Fields: fields, Tables: tables}
}

// figures writes the three mixing figures into dir.
func (m *runMixing) figures(dir string) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	var curves []outputs.Curve
	for k, ni := range normInfo {
		curves = append(curves, outputs.Curve{Label: ni.plain, X: m.tSI, Y: m.ratios[k], Style: outputs.StyleLinePoints})
	}
	if err := outputs.Lines(filepath.Join(dir, "mixing-norms.png"), curves, outputs.Frame{
		Title: "Mixing norms relative to t = 0 (simulation)",
		X:     outputs.Axis{Label: "time t", Unit: "s"},
		Y:     outputs.Axis{Label: "norm / norm(0)", Log: true},
	}); err != nil {
		return err
	}
	curves = nil
	top := 0.0
	for _, s := range m.specs {
		for _, v := range s {
			top = math.Max(top, v*1e12)
		}
	}
	ks := make([]float64, m.spec.Shells())
	for b := range ks {
		ks[b] = m.spec.K(b) / m.scales.Length * 1e-6
	}
	for i, j := range m.specAt {
		s := make([]float64, len(m.specs[i]))
		for b, v := range m.specs[i] {
			s[b] = v * 1e12 // µm²
		}
		curves = append(curves, outputs.Curve{Label: "t = " + human(m.tSI[j], config.DimTime), X: ks, Y: s, Style: outputs.StyleLinePoints})
	}
	if len(curves) > 0 && top > 0 {
		// Twelve decades below the largest value: what lies below is
		// round-off of the transforms (relative 1e-16 in φ, 1e-32 in S).
		if err := outputs.Lines(filepath.Join(dir, "mixing-spectra.png"), curves, outputs.Frame{
			Title: "Structure factor of the composition (simulation)",
			X:     outputs.Axis{Label: "wavenumber k", Unit: "1/µm", Log: true},
			Y:     outputs.Axis{Label: "S(k)", Unit: "µm²", Log: true, Min: top * 1e-12, Max: top * 2},
		}); err != nil {
			return err
		}
	}
	l := make([]float64, len(m.length))
	for i, v := range m.length {
		l[i] = v * 1e6
	}
	return outputs.Lines(filepath.Join(dir, "mixing-length.png"), []outputs.Curve{{Label: "L(t) = 2pi/<k>", X: m.tSI, Y: l, Style: outputs.StyleLinePoints}}, outputs.Frame{
		Title: "Domain length of the composition (simulation)",
		X:     outputs.Axis{Label: "time t", Unit: "s"},
		Y:     outputs.Axis{Label: "domain length L", Unit: "µm"},
	})
}
