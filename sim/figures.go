package sim

import (
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"

	"github.com/memix-sim/memix/config"
	"github.com/memix-sim/memix/outputs"
)

// figures renders the end-of-run figures into dir/figures: the final
// composition, orientation and flow, and the mixing norms over time. Axes
// are in SI units (µm, s).
func (j *job) figures() error {
	dir := filepath.Join(j.dir, FiguresDir)
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("figures: %w", err)
	}
	u := j.red.Units
	um := float64(u.Length) / 1e-6 // reduced length → µm
	g := j.red.Grid
	lat := outputs.Lattice{Nx: g.Nx, Ny: g.Ny, Dx: g.Lx / float64(g.Nx) * um, Dy: g.Ly / float64(g.Ny) * um}
	frame := func(title string) outputs.Frame {
		return outputs.Frame{
			Title: fmt.Sprintf("%s at t = %s (model prediction)", title, config.Time(j.model.Time()*float64(u.Time))),
			X:     outputs.Axis{Label: "x", Unit: "µm"}, Y: outputs.Axis{Label: "y", Unit: "µm"},
		}
	}
	j.model.UpdateViews()
	view := map[string][]float64{}
	for _, v := range j.model.Views() {
		view[v.Name] = v.Data
	}
	n := g.RealLen()
	var errs []error
	if phi, ok := view["phi"]; ok {
		errs = append(errs, outputs.HeatMap(filepath.Join(dir, "composition.png"), lat, phi, frame("Lipid composition φ"),
			outputs.ColorScale{Label: "φ", Unit: "1", Kind: outputs.ScaleDiverging, Min: -1, Max: 1}))
	}
	if q11, ok := view["Q11"]; ok {
		q12, c := view["Q12"], view["c"]
		order, angle := make([]float64, n), make([]float64, n)
		for i := range order {
			q := math.Hypot(q11[i], q12[i])
			if c[i] > 0 {
				order[i] = math.Min(2*q/c[i], 1)
			}
			angle[i] = 0.5 * math.Atan2(q12[i], q11[i])
		}
		errs = append(errs, outputs.DirectorMap(filepath.Join(dir, "orientation.png"), lat, order, angle, order, 0,
			frame("Inclusion order 2|q|/c and director"), outputs.ColorScale{Label: "order", Unit: "1", Kind: outputs.ScaleSequential, Min: 0, Max: 1}))
	}
	rate := 1 / float64(u.Time)
	speed := float64(u.Length) / float64(u.Time) / 1e-6 // → µm/s
	scaled := func(x []float64, f float64) []float64 {
		y := make([]float64, len(x))
		for i, v := range x {
			y[i] = v * f
		}
		return y
	}
	flowing := false
	for i := range view["ux"] {
		if view["ux"][i] != 0 || view["uy"][i] != 0 {
			flowing = true
			break
		}
	}
	if flowing { // a lipid-only run has no flow to draw
		errs = append(errs,
			outputs.HeatMap(filepath.Join(dir, "vorticity.png"), lat, scaled(view["vorticity"], rate), frame("Vorticity ω"),
				outputs.ColorScale{Label: "ω", Unit: "1/s", Kind: outputs.ScaleDiverging}),
			outputs.VectorMap(filepath.Join(dir, "velocity.png"), lat, scaled(view["ux"], speed), scaled(view["uy"], speed), 0,
				frame("Membrane velocity"), outputs.ColorScale{Label: "|u|", Unit: "µm/s", Kind: outputs.ScaleSequential}))
	}
	errs = append(errs, j.seriesFigures(dir))
	return errors.Join(errs...)
}

// seriesFigures plots the mixing norms (ratios to their initial values) and
// the order and kinetic energy over time from series.csv.
func (j *job) seriesFigures(dir string) error {
	cols, rows, err := outputs.ReadSeries(filepath.Join(j.dir, SeriesFile))
	if err != nil {
		return err
	}
	if len(rows) < 2 {
		return nil
	}
	col := map[string]int{}
	for i, c := range cols {
		col[c.Name] = i
	}
	t := column(rows, col["time_si"])
	var errs []error
	if j.iPhi >= 0 {
		labels := [...]string{"variance norm", "H^(−1) norm", "H^(−1/2) norm", "mix-norm"}
		var curves []outputs.Curve
		for n, c := range normColumns {
			v := column(rows, col[c.Name])
			if v[0] <= 0 {
				continue
			}
			r := make([]float64, len(v))
			for i := range v {
				r[i] = v[i] / v[0]
			}
			curves = append(curves, outputs.Curve{Label: labels[n], X: t, Y: r})
		}
		if len(curves) > 0 {
			errs = append(errs, outputs.Lines(filepath.Join(dir, "mixing.png"), curves, outputs.Frame{
				Title: "Mixing of the lipid composition (model prediction)",
				X:     outputs.Axis{Label: "time", Unit: "s"},
				Y:     outputs.Axis{Label: "norm / initial norm", Unit: "1", Log: true},
			}))
		}
	}
	if i, ok := col["order"]; ok {
		curves := []outputs.Curve{
			{Label: "local order 2⟨|q|⟩/⟨c⟩", X: t, Y: column(rows, i)},
			{Label: "global order 2|⟨q⟩|/⟨c⟩", X: t, Y: column(rows, col["global_order"])},
		}
		errs = append(errs, outputs.Lines(filepath.Join(dir, "order.png"), curves, outputs.Frame{
			Title: "Orientational order of the inclusions (model prediction)",
			X:     outputs.Axis{Label: "time", Unit: "s"},
			Y:     outputs.Axis{Label: "order", Unit: "1"},
		}))
	}
	ke := column(rows, col["kinetic_energy"])
	v := float64(j.red.Units.Length) / float64(j.red.Units.Time) / 1e-6
	rms := make([]float64, len(ke))
	moving := false
	for i := range ke {
		rms[i] = math.Sqrt(2*ke[i]) * v
		moving = moving || rms[i] > 0
	}
	if !moving {
		return errors.Join(errs...)
	}
	errs = append(errs, outputs.Lines(filepath.Join(dir, "speed.png"), []outputs.Curve{{Label: "rms velocity", X: t, Y: rms}}, outputs.Frame{
		Title: "Root-mean-square membrane velocity (model prediction)",
		X:     outputs.Axis{Label: "time", Unit: "s"},
		Y:     outputs.Axis{Label: "rms |u|", Unit: "µm/s", Log: true},
	}))
	return errors.Join(errs...)
}
