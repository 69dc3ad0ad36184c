package main

import (
	"fmt"
	"math"

	"github.com/spf13/cobra"

	"github.com/memix-sim/memix/cmd/memix/internal/report"
	"github.com/memix-sim/memix/config"
)

func init() { register(newCheckCmd) }

func newCheckCmd(e *env) *cobra.Command {
	var out report.Flags
	var resolved bool
	cmd := &cobra.Command{
		Use:   "check CONFIG",
		Short: "Validate a configuration and print its derived scales and resolution advice",
		Long: `check reads a configuration file, applies the MEMIX_* environment overrides and validates
every key. On success it prints the lengths the membrane hydrodynamics sets (Saffman–Delbrück,
wall and friction screening), the reduced units, and advice on whether the grid resolves
those lengths and the box holds them. With active inclusions or phase-separating lipids it also
predicts the instability of the uniform state (as memix stability does): the fastest-growing
wavelength, the grid points on it and whether the box holds an unstable mode; with a
composition-dependent membrane viscosity, the viscosity contrast. On failure it lists every
problem, each with its key, value, unit and valid range, and exits with status 2. The lengths
and rates are model predictions.

Problems that stop memix run but not the other commands are listed as warnings (exit
status 0): nothing to simulate, inclusion diffusivities that cannot be derived, and a
grid that does not resolve the lipid interface or the fastest-growing wavelength (which
memix run --force-resolution accepts).`,
		Example: "  memix check examples/glass-gap.yaml\n  memix check --json run.yaml\n  memix check --resolved run.yaml > config.resolved.yaml",
		Args:    cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			f, err := out.Format()
			if err != nil {
				return usageError{err}
			}
			path := args[0]
			c, err := loadConfig(path)
			if err != nil {
				if ps := config.Problems(err); f != report.Text && len(ps) > 0 {
					if werr := report.Write(cmd.OutOrStdout(), f, problemsDoc(path, ps)); werr != nil {
						return werr
					}
				}
				return err
			}
			if resolved {
				return c.WriteResolved(cmd.OutOrStdout(), "checked by memix "+version)
			}
			r, err := config.Reduce(c)
			if err != nil {
				return configError{path, err}
			}
			return report.Write(cmd.OutOrStdout(), f, checkDoc(path, c, r))
		},
	}
	out.Bind(cmd.Flags())
	cmd.Flags().BoolVar(&resolved, "resolved", false, "print the configuration with every default filled in, as YAML, instead of the report")
	return cmd
}

func problemsDoc(path string, ps []*config.FieldError) report.Doc {
	t := &report.Table{
		Key:     "problems",
		Title:   "Problems",
		Columns: []report.Column{{Key: "key"}, {Key: "value"}, {Key: "unit"}, {Key: "valid"}, {Key: "problem"}},
	}
	for _, p := range ps {
		t.Rows = append(t.Rows, []any{p.Key, p.Value, p.Unit, p.Range, p.Error()})
	}
	return report.Doc{
		Fields: []report.Field{{Key: "config", Value: path}, {Key: "valid", Value: false}},
		Tables: []*report.Table{t},
	}
}

// lengthCell shows a length in a readable unit; a length that does not
// exist (+Inf) reads "none" and is null in JSON.
func lengthCell(l config.Length) report.Cell {
	if math.IsInf(float64(l), 1) {
		return report.Cell{Value: nil, Text: "none"}
	}
	return report.Cell{Value: float64(l), Text: l.String()}
}

func reducedCell(l config.Length, u config.Units) report.Cell {
	if math.IsInf(float64(l), 1) {
		return report.Cell{Value: nil, Text: "–"}
	}
	x := u.ToReduced(l)
	return report.Cell{Value: x, Text: report.FormatFloat(x)}
}

func checkDoc(path string, c config.Config, r *config.Reduced) report.Doc {
	s, u := r.Scales, r.Units
	lengths := &report.Table{
		Key:   "lengths",
		Title: "Lengths (model predictions)",
		Columns: []report.Column{
			{Key: "name", Title: "quantity"},
			{Key: "value", Title: "value", Unit: "m", TextUnitInCells: true},
			{Key: "reduced", Title: "in units of ℓ₀"},
		},
	}
	for _, row := range []struct {
		key, title string
		l          config.Length
	}{
		{"saffman_delbruck", "Saffman–Delbrück length η_m/(η₊+η₋)", s.SaffmanDelbruck},
		{"wall_upper", "screening length of the upper wall sqrt(η_m·H/η)", s.WallUpper},
		{"wall_lower", "screening length of the lower wall sqrt(η_m·H/η)", s.WallLower},
		{"friction", "friction length sqrt(η_m/ξ)", s.Friction},
		{"screening", "combined screening length 1/sqrt(D(0)/η_m)", s.Screening},
		{"spacing", "grid spacing (larger)", s.Spacing},
		{"box", "box (shorter side)", s.Box},
	} {
		lengths.Rows = append(lengths.Rows, []any{report.Cell{Value: row.key, Text: row.title}, lengthCell(row.l), reducedCell(row.l, u)})
	}

	units := &report.Table{
		Key:   "units",
		Title: "Reduced units",
		Columns: []report.Column{
			{Key: "name", Title: "unit"},
			{Key: "value", Title: "value"},
			{Key: "unit", Title: "SI unit"},
		},
	}
	for _, row := range []struct {
		key, title string
		q          config.Physical
	}{
		{"length", "length ℓ₀", u.Length},
		{"time", "time τ₀", u.Time},
		{"surface_viscosity", "surface viscosity η₀ (membrane.viscosity)", u.SurfaceViscosity},
		{"temperature", "temperature T₀", u.Temperature},
		{"energy", "energy η₀ℓ₀²/τ₀", u.Energy()},
	} {
		units.Rows = append(units.Rows, []any{report.Cell{Value: row.key, Text: row.title},
			report.Cell{Value: row.q.SI(), Text: config.FormatHuman(row.q.SI(), row.q.Dimension())},
			row.q.Dimension().Unit()})
	}
	units.Rows = append(units.Rows, []any{report.Cell{Value: "kT_reduced", Text: "k_B·T in reduced units"}, r.KT, ""})

	advice := &report.Table{
		Key:     "advice",
		Title:   "Resolution",
		Columns: []report.Column{{Key: "level"}, {Key: "advice"}},
	}
	for _, a := range s.Advice {
		advice.Rows = append(advice.Rows, []any{a.Level.String(), a.Text})
	}
	more, instability := checkInstability(c)
	advice.Rows = append(advice.Rows, more...)
	// What stops memix run although the configuration is valid.
	for _, p := range c.RunProblems() {
		advice.Rows = append(advice.Rows, []any{config.Warn.String(), "memix run refuses this: " + p.Error()})
	}
	for _, p := range c.ResolutionWarnings() {
		advice.Rows = append(advice.Rows, []any{config.Warn.String(), "memix run refuses this unless --force-resolution: " + p.Error()})
	}

	nx, ny := c.Grid.Size()
	return report.Doc{
		Fields: []report.Field{
			{Key: "config", Title: "configuration", Value: path},
			{Key: "valid", Value: true},
			{Key: "grid_points", Title: "grid points", Value: fmt.Sprintf("%d×%d", nx, ny)},
			{Key: "fft", Title: "FFT", Value: fmt.Sprintf("%s, %d threads", c.Grid.Backend(), c.Grid.ThreadCount())},
		},
		Tables: tables(lengths, units, advice, instability),
	}
}

// tables drops the nil tables.
func tables(ts ...*report.Table) []*report.Table {
	var out []*report.Table
	for _, t := range ts {
		if t != nil {
			out = append(out, t)
		}
	}
	return out
}
