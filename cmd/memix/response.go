package main

import (
	"errors"
	"fmt"
	"image"
	"image/color"
	"image/draw"
	"image/png"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"

	"github.com/spf13/cobra"

	"github.com/memix-sim/memix/cmd/memix/internal/report"
	"github.com/memix-sim/memix/config"
	"github.com/memix-sim/memix/flow"
	"github.com/memix-sim/memix/outputs"
	"github.com/memix-sim/memix/spectral"
)

func init() { register(newResponseCmd) }

// The flow maps are computed in units of µm, s and pN (velocities in
// µm/s), so that their axes and colour bars read in those units. The
// factors convert SI values to them.
const (
	umPerM            = 1e6
	pNPerN            = 1e12
	surfViscToMap     = pNPerN / umPerM          // Pa·s·m = N·s/m → pN·s/µm
	bulkViscToMap     = pNPerN / umPerM / umPerM // Pa·s = N·s/m² → pN·s/µm²
	frictionToMap     = bulkViscToMap / umPerM   // Pa·s/m = N·s/m³ → pN·s/µm³
	torqueToMap       = pNPerN * umPerM          // N·m → pN·µm
	mapForce          = 1.0                      // pN, the point force of the maps
	mapForceWidth     = 2.0                      // grid spacings: Gaussian width of the point force
	mapDipoleWidth    = 1.5                      // grid spacings: width of each force of the dipole
	mapDipoleLength   = 6.0                      // grid spacings: separation of the dipole's forces
	defaultMapDipoleT = 20.0                     // k_BT: dipole of the maps when inclusions.dipole is 0
)

func newResponseCmd(e *env) *cobra.Command {
	var out report.Flags
	var compare, rminText, rmaxText, figures string
	var points int
	cmd := &cobra.Command{
		Use:   "response CONFIG",
		Short: "Flow of a point force and of a force dipole in the configured membrane",
		Long: `response tabulates the flow that a point force drives in the infinite membrane of CONFIG:
u = G∥(r) (r̂·F) r̂ + G⊥(r) (F − (r̂·F) r̂), the longitudinal and transverse responses G∥ and G⊥
(velocity per force) at log-spaced distances r, also scaled as 4πη_m G (dimensionless). Near the
force the flow is that of a 2D membrane (G ≈ ln(1/r)/(4πη_m)); beyond the crossover length
(Saffman–Delbrück for deep subphases, the screening length over a wall or on a substrate) the
subphases or the friction take over.

--figures DIR writes response.png (|G∥| and |G⊥| against r, log-log) and two flow maps in the
configured periodic box, arrows over the speed: flow-point.png for a point force of 1 pN along x
and flow-dipole.png for a force dipole of the configured strength along x (periodic images
included). --compare adds a second configuration (e.g. deep against confined): its columns in
the table, its curves in response.png, and its maps beside the first.

The values are model predictions of a continuum membrane, not measurements.`,
		Example: "  memix response examples/free-patch.yaml\n  memix response examples/free-patch.yaml --compare examples/glass-gap.yaml --figures figs\n  memix response examples/supported-friction.yaml --rmin 1nm --rmax 1um --points 40 --csv",
		Args:    cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			f, err := out.Format()
			if err != nil {
				return usageError{err}
			}
			if err := checkIntFlag("points", points, 2, 100000); err != nil {
				return err
			}
			paths := []string{args[0]}
			if compare != "" {
				paths = append(paths, compare)
			}
			var cases []*responseCase
			for _, p := range paths {
				c, err := loadConfig(p)
				if err != nil {
					return err
				}
				m := c.FlowMembrane()
				if err := m.CheckResponse(); err != nil {
					return configError{p, &config.FieldError{Key: "subphase.lower.kind", Value: c.Subphase.Lower.Kind,
						Range: "deep or wall on one side, or membrane.friction > 0",
						Err:   fmt.Errorf("%w: %v", config.ErrConflict, err)}}
				}
				cases = append(cases, &responseCase{name: displayName(p), cfg: c, m: m})
			}
			rmin, rmax := defaultRRange(cases[0])
			fl := cmd.Flags()
			if fl.Changed("rmin") {
				if rmin, err = parseQuantityFlag("rmin", rminText, config.DimLength, 0, true); err != nil {
					return err
				}
			}
			if fl.Changed("rmax") {
				if rmax, err = parseQuantityFlag("rmax", rmaxText, config.DimLength, 0, true); err != nil {
					return err
				}
			}
			rs, err := flow.LogSpaced(rmin, rmax, points)
			if err != nil {
				return flagError("rmax", human(rmax, config.DimLength), "m", "> --rmin = "+human(rmin, config.DimLength), config.ErrRange)
			}
			for _, rc := range cases {
				if rc.table, err = rc.m.ResponseTable(rs); err != nil {
					return fmt.Errorf("%s: %w", rc.name, err)
				}
			}
			if figures != "" {
				if err := responseFigures(figures, cases); err != nil {
					return err
				}
			}
			return report.Write(cmd.OutOrStdout(), f, responseDoc(cases, figures))
		},
	}
	out.Bind(cmd.Flags())
	fl := cmd.Flags()
	fl.StringVar(&compare, "compare", "", "a second configuration to compare (e.g. confined against deep)")
	fl.StringVar(&rminText, "rmin", "", "smallest distance, e.g. 1nm (default: the crossover length / 100)")
	fl.StringVar(&rmaxText, "rmax", "", "largest distance, e.g. 10um (default: the crossover length × 100)")
	fl.IntVar(&points, "points", 25, "number of log-spaced distances")
	fl.StringVar(&figures, "figures", "", "write response.png, flow-point.png and flow-dipole.png into this directory")
	return cmd
}

// responseCase is one configuration of memix response.
type responseCase struct {
	name  string
	cfg   config.Config
	m     flow.Membrane
	table []flow.ResponsePoint
	maps  []flowMapResult
}

// flowMapResult summarises one flow map.
type flowMapResult struct {
	what     string  // "point force" or "force dipole"
	maxSpeed float64 // m/s
}

// defaultRRange spans two decades on each side of the crossover length,
// or the grid spacing to the box when there is no crossover.
func defaultRRange(rc *responseCase) (lo, hi float64) {
	if l := rc.m.CrossoverLength(); !math.IsInf(l, 0) && l > 0 {
		return l / 100, l * 100
	}
	lx, ly := rc.cfg.Grid.Lengths()
	return float64(rc.cfg.Grid.Spacing()), math.Max(float64(lx), float64(ly))
}

func responseDoc(cases []*responseCase, figures string) report.Doc {
	var fields []report.Field
	t := &report.Table{
		Key:     "response",
		Title:   "Point-force response of the infinite membrane (model predictions)",
		Columns: []report.Column{qcol("r", "r", config.DimLength)},
		Notes: []string{predictionNote,
			"u = G∥ (r̂·F) r̂ + G⊥ (F − (r̂·F) r̂); G < 0 means flow against the force (the far field of a screened membrane)."},
	}
	for i, rc := range cases {
		sfx, tsfx := "", ""
		if len(cases) > 1 {
			sfx, tsfx = fmt.Sprintf("_%d", i+1), " "+rc.name
		}
		pre := ""
		if i > 0 {
			pre = fmt.Sprintf("compare_")
		}
		fields = append(fields,
			report.Field{Key: pre + "config", Title: "configuration" + tsfx, Value: rc.name},
			report.Field{Key: pre + "membrane", Title: "membrane" + tsfx, Value: membraneText(rc.m)},
			report.Field{Key: pre + "crossover_length", Title: "crossover length" + tsfx, Value: lengthOrNone(rc.m.CrossoverLength())},
			report.Field{Key: pre + "saffman_delbruck_length", Title: "L_SD = η_m/(η₊+η₋)" + tsfx, Value: lengthOrNone(rc.m.SaffmanDelbruck())},
			report.Field{Key: pre + "screening_length", Title: "screening length" + tsfx, Value: lengthOrNone(rc.m.ScreeningLength())},
		)
		t.Columns = append(t.Columns,
			qcol("g_par"+sfx, "G∥"+tsfx, dimFlowPerF),
			qcol("g_perp"+sfx, "G⊥"+tsfx, dimFlowPerF),
			report.Column{Key: "g_par_scaled" + sfx, Title: "4πη_m G∥" + tsfx},
			report.Column{Key: "g_perp_scaled" + sfx, Title: "4πη_m G⊥" + tsfx})
	}
	for j, pt := range cases[0].table {
		r := []any{qcell(pt.R, config.DimLength)}
		for _, rc := range cases {
			q := rc.table[j]
			r = append(r, qcell(q.Par, dimFlowPerF), qcell(q.Perp, dimFlowPerF), q.ParScaled, q.PerpScaled)
		}
		t.Rows = append(t.Rows, r)
	}
	tables := []*report.Table{t}
	if figures != "" {
		fields = append(fields, report.Field{Key: "figures", Value: figures})
		mt := &report.Table{
			Key:   "flow_maps",
			Title: "Flow maps in the periodic box (model predictions)",
			Columns: []report.Column{
				{Key: "config", Title: "configuration"},
				{Key: "force"},
				qcol("max_speed", "largest speed", config.DimVelocity),
				{Key: "figure"},
			},
		}
		for _, rc := range cases {
			for i, fm := range rc.maps {
				mt.Rows = append(mt.Rows, []any{rc.name, fm.what, qcell(fm.maxSpeed, config.DimVelocity), filepath.Join(figures, mapFiles[i])})
			}
		}
		mt.Notes = append(mt.Notes, "The forces are Gaussians a few grid spacings wide; the maps include the periodic images.")
		tables = append(tables, mt)
	}
	return report.Doc{Fields: fields, Tables: tables}
}

func lengthOrNone(l float64) report.Cell {
	if math.IsInf(l, 1) {
		return report.Cell{Value: nil, Text: "none"}
	}
	return qcell(l, config.DimLength)
}

// mapFiles are the flow-map figures, in the order of flowMapResult.
var mapFiles = []string{"flow-point.png", "flow-dipole.png"}

// responseFigures writes response.png and the flow maps into dir.
func responseFigures(dir string, cases []*responseCase) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	// The curves are sampled more finely than the table (the font of the
	// figures lacks ∥ and ⊥, so the labels spell them out).
	var curves []outputs.Curve
	first := cases[0].table
	rs, err := flow.LogSpaced(first[0].R, first[len(first)-1].R, max(figureSamples/2, len(first)))
	if err != nil {
		return err
	}
	for _, rc := range cases {
		pts, err := rc.m.ResponseTable(rs)
		if err != nil {
			return fmt.Errorf("%s: %w", rc.name, err)
		}
		x := make([]float64, len(pts))
		par := make([]float64, len(pts))
		perp := make([]float64, len(pts))
		for i, p := range pts {
			x[i], par[i], perp[i] = p.R*umPerM, math.Abs(p.Par), math.Abs(p.Perp)
		}
		pre := ""
		if len(cases) > 1 {
			pre = rc.name + ": "
		}
		curves = append(curves, outputs.Curve{Label: pre + "longitudinal |G_par|", X: x, Y: par}, outputs.Curve{Label: pre + "transverse |G_perp|", X: x, Y: perp})
	}
	if err := outputs.Lines(filepath.Join(dir, "response.png"), curves, outputs.Frame{
		Title: "Point-force response of the infinite membrane (model prediction)",
		X:     outputs.Axis{Label: "distance r", Unit: "µm", Log: true},
		Y:     outputs.Axis{Label: "response |G|", Unit: "m/(N·s)", Log: true},
	}); err != nil {
		return err
	}

	tmp, err := os.MkdirTemp(dir, ".maps-")
	if err != nil {
		return err
	}
	defer os.RemoveAll(tmp)
	parts := make([][]string, len(mapFiles))
	for ci, rc := range cases {
		files, res, err := flowMaps(tmp, fmt.Sprint(ci), rc)
		if err != nil {
			return fmt.Errorf("%s: flow maps: %w", rc.name, err)
		}
		rc.maps = res
		for i := range files {
			parts[i] = append(parts[i], files[i])
		}
	}
	for i, name := range mapFiles {
		if err := besideEachOther(filepath.Join(dir, name), parts[i]); err != nil {
			return err
		}
	}
	return nil
}

// flowMaps renders the point-force and dipole maps of rc into dir (file
// names prefixed with tag) and returns their paths and largest speeds.
func flowMaps(dir, tag string, rc *responseCase) ([]string, []flowMapResult, error) {
	c := rc.cfg
	nx, ny := c.Grid.Size()
	lx, ly := c.Grid.Lengths()
	g, err := spectral.NewGrid(nx, ny, float64(lx)*umPerM, float64(ly)*umPerM)
	if err != nil {
		return nil, nil, err
	}
	plan, err := spectral.NewPlan(g, c.Grid.PlanOptions())
	if err != nil {
		return nil, nil, err
	}
	defer plan.Close()
	m := rc.m
	mm := flow.Membrane{Viscosity: m.Viscosity * surfViscToMap, Friction: m.Friction * frictionToMap, Upper: m.Upper, Lower: m.Lower}
	for _, s := range []*flow.Subphase{&mm.Upper, &mm.Lower} {
		s.Viscosity *= bulkViscToMap
		s.Depth *= umPerM
	}
	solver, err := flow.NewSolver(g, mm)
	if err != nil {
		return nil, nil, err
	}
	fm := flow.NewFlowMap(solver, plan)
	h := math.Max(g.Lx/float64(g.Nx), g.Ly/float64(g.Ny))
	ux, uy := g.NewReal(), g.NewReal()
	lat := outputs.GridLattice(g)
	frame := func(title string) outputs.Frame {
		return outputs.Frame{Title: title, X: outputs.Axis{Label: "x", Unit: "µm"}, Y: outputs.Axis{Label: "y", Unit: "µm"}}
	}
	speed := func(u, v []float64) outputs.ColorScale {
		// Saturate the colours at the 99th percentile of the speed, so that
		// the flow away from the force is visible; the arrows keep their
		// true lengths.
		s := make([]float64, len(u))
		for i := range u {
			s[i] = math.Hypot(u[i], v[i])
		}
		slices.Sort(s)
		return outputs.ColorScale{Label: "speed (saturated above the 99th percentile)", Unit: "µm/s", Kind: outputs.ScaleSequential, Min: 0, Max: s[len(s)*99/100]}
	}
	var files []string
	var res []flowMapResult

	err = fm.PointForce(ux, uy, nil, flow.PointForce{X: g.Lx / 2, Y: g.Ly / 2, Fx: mapForce, Width: mapForceWidth * h})
	if err != nil {
		return nil, nil, err
	}
	p := filepath.Join(dir, tag+"-point.png")
	if err := outputs.VectorMap(p, lat, ux, uy, 0, frame(rc.name+": point force 1 pN along x"), speed(ux, uy)); err != nil {
		return nil, nil, err
	}
	files, res = append(files, p), append(res, flowMapResult{"point force 1 pN along x", maxHypot(ux, uy) / umPerM})

	sigma := c.Inclusions.Sign() * float64(c.Inclusions.Dipole)
	if sigma == 0 {
		sigma = -defaultMapDipoleT * float64(c.KT())
	}
	kind := "extensile"
	if sigma > 0 {
		kind = "contractile"
	}
	err = fm.Dipole(ux, uy, nil, flow.ForceDipole{X: g.Lx / 2, Y: g.Ly / 2, Strength: sigma * torqueToMap,
		Length: mapDipoleLength * h, Width: mapDipoleWidth * h})
	if err != nil {
		return nil, nil, err
	}
	what := fmt.Sprintf("%s dipole %s along x", kind, energyText(math.Abs(sigma), float64(c.KT())))
	p = filepath.Join(dir, tag+"-dipole.png")
	if err := outputs.VectorMap(p, lat, ux, uy, 0, frame(rc.name+": "+what), speed(ux, uy)); err != nil {
		return nil, nil, err
	}
	files, res = append(files, p), append(res, flowMapResult{what, maxHypot(ux, uy) / umPerM})
	return files, res, nil
}

func maxHypot(u, v []float64) float64 {
	m := 0.0
	for i := range u {
		m = math.Max(m, math.Hypot(u[i], v[i]))
	}
	return m
}

// besideEachOther writes the PNG images of parts side by side, top
// aligned on white, to path (atomically).
func besideEachOther(path string, parts []string) error {
	var imgs []image.Image
	w, h := 0, 0
	for _, p := range parts {
		f, err := os.Open(p)
		if err != nil {
			return err
		}
		img, err := png.Decode(f)
		f.Close()
		if err != nil {
			return fmt.Errorf("%s: %w", p, err)
		}
		imgs = append(imgs, img)
		w += img.Bounds().Dx()
		h = max(h, img.Bounds().Dy())
	}
	if len(imgs) == 0 {
		return errors.New("no image to combine")
	}
	dst := image.NewRGBA(image.Rect(0, 0, w, h))
	draw.Draw(dst, dst.Bounds(), image.NewUniform(color.White), image.Point{}, draw.Src)
	x := 0
	for _, img := range imgs {
		b := img.Bounds()
		draw.Draw(dst, image.Rect(x, 0, x+b.Dx(), b.Dy()), img, b.Min, draw.Src)
		x += b.Dx()
	}
	return outputs.WriteFileAtomic(path, func(wr io.Writer) error { return png.Encode(wr, dst) })
}
