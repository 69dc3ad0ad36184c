package outputs

import (
	"bufio"
	"errors"
	"fmt"
	"image"
	"image/color"
	imgdraw "image/draw"
	"image/png"
	"math"
	"os"
	"path/filepath"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/palette"
	"gonum.org/v1/plot/palette/moreland"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/plotutil"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"

	"github.com/memix-sim/memix/spectral"
)

// Lattice places samples on a regular lattice: sample (i, j), stored at
// index j*Nx+i, sits at x = X0 + i·Dx, y = Y0 + j·Dy. A field on the grid
// is GridLattice(g); a parameter scan is a lattice of parameter values.
type Lattice struct {
	Nx, Ny int
	X0, Y0 float64
	Dx, Dy float64 // > 0
}

// GridLattice returns the lattice of the points of grid g.
func GridLattice(g *spectral.Grid) Lattice {
	return Lattice{Nx: g.Nx, Ny: g.Ny, Dx: g.Lx / float64(g.Nx), Dy: g.Ly / float64(g.Ny)}
}

func (l Lattice) check(what string, data ...[]float64) {
	for _, d := range data {
		if len(d) != l.Nx*l.Ny {
			panic(fmt.Sprintf("outputs: %s: %d values on a %d×%d lattice", what, len(d), l.Nx, l.Ny))
		}
	}
}

// Axis labels one axis of a figure. The label reads "Label [Unit]" (just
// Label when Unit is empty).
type Axis struct {
	Label string
	Unit  string
	Log   bool    // logarithmic scale (line plots only); values ≤ 0 are not drawn
	Min   float64 // fixed range when Min < Max (line plots only), else from the data
	Max   float64
}

func (a Axis) text(fallback string) string {
	l := a.Label
	if l == "" {
		l = fallback
	}
	if a.Unit == "" {
		return l
	}
	return l + " [" + a.Unit + "]"
}

// Frame is what every figure has: a title, two axes and a size.
type Frame struct {
	Title         string
	X, Y          Axis
	Width, Height int // pixels; 0 means 800 wide and 600 high (maps: high enough for the map's aspect ratio)
}

func (f Frame) size() (int, int, error) {
	w, h := f.Width, f.Height
	if w == 0 {
		w = 800
	}
	if h == 0 {
		h = 600
	}
	if w < 64 || h < 64 || w > 8192 || h > 8192 {
		return 0, 0, fmt.Errorf("figure size %d×%d px: each side must be in [64, 8192]", w, h)
	}
	return w, h, nil
}

// ScaleKind chooses the colour map of a map figure.
type ScaleKind int

const (
	// ScaleAuto is diverging when the data take both signs, else
	// sequential.
	ScaleAuto ScaleKind = iota
	// ScaleSequential maps low to high through Kindlmann's
	// luminance-linear map, from black to 95 % luminance.
	ScaleSequential
	// ScaleDiverging maps a range symmetric about zero through
	// Moreland's smooth blue–red map, zero at its light centre.
	ScaleDiverging
)

// ColorScale says how values become colours and labels the colour bar.
type ColorScale struct {
	Label string
	Unit  string
	Kind  ScaleKind
	Min   float64 // fixed range when Min < Max, else from the finite data
	Max   float64
}

// paletteSize is the number of colours a map uses.
const paletteSize = 256

// resolve returns the value range and the colour map of the scale for
// data. A diverging range is symmetric about zero; a constant field gets a
// small range around its value.
func (cs ColorScale) resolve(data []float64) (palette.ColorMap, error) {
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, v := range data {
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			lo, hi = math.Min(lo, v), math.Max(hi, v)
		}
	}
	if lo > hi {
		return nil, errors.New("the field has no finite value")
	}
	if cs.Min < cs.Max {
		lo, hi = cs.Min, cs.Max
	}
	diverging := cs.Kind == ScaleDiverging || cs.Kind == ScaleAuto && lo < 0 && hi > 0
	var cm palette.ColorMap
	if diverging {
		m := math.Max(math.Abs(lo), math.Abs(hi))
		if m == 0 {
			m = 1
		}
		lo, hi = -m, m
		cm = moreland.SmoothBlueRed()
	} else {
		if lo == hi {
			d := 0.01 * math.Abs(lo)
			if d == 0 {
				d = 1
			}
			lo, hi = lo-d, hi+d
		}
		cm = &truncated{ColorMap: moreland.Kindlmann(), top: sequentialTop}
	}
	cm.SetMin(lo)
	cm.SetMax(hi)
	return cm, nil
}

// sequentialTop is the part of Kindlmann's map the sequential scale uses:
// it stops at 95 % luminance so that the highest values stay visible on a
// white page.
const sequentialTop = 0.95

// truncated is a colour map that spans only [0, top] of the map it wraps.
type truncated struct {
	palette.ColorMap // range [0, 1]
	top              float64
	min, max         float64
}

func (t *truncated) SetMin(v float64) { t.min = v; t.ColorMap.SetMin(0) }
func (t *truncated) SetMax(v float64) { t.max = v; t.ColorMap.SetMax(1) }
func (t *truncated) Min() float64     { return t.min }
func (t *truncated) Max() float64     { return t.max }

func (t *truncated) At(v float64) (color.Color, error) {
	if v < t.min || v > t.max || math.IsNaN(v) {
		return nil, palette.ErrOverflow
	}
	return t.ColorMap.At(t.top * (v - t.min) / (t.max - t.min))
}

func (t *truncated) Palette(n int) palette.Palette {
	c := make([]color.Color, n)
	for i := range c {
		var err error
		if c[i], err = t.ColorMap.At(t.top * float64(i) / float64(n-1)); err != nil {
			panic(err)
		}
	}
	return plainPalette(c)
}

type plainPalette []color.Color

func (p plainPalette) Colors() []color.Color { return p }

// fieldImage paints data on l with one pixel per sample, row 0 at the top
// holding j = Ny−1 (y grows upwards in the figure). NaN and infinities are
// transparent.
func fieldImage(l Lattice, data []float64, cm palette.ColorMap) *image.NRGBA {
	pal := cm.Palette(paletteSize).Colors()
	lo, hi := cm.Min(), cm.Max()
	img := image.NewNRGBA(image.Rect(0, 0, l.Nx, l.Ny))
	for j := 0; j < l.Ny; j++ {
		for i := 0; i < l.Nx; i++ {
			v := data[j*l.Nx+i]
			if math.IsNaN(v) || math.IsInf(v, 0) {
				continue
			}
			k := int(math.Round((v - lo) / (hi - lo) * (paletteSize - 1)))
			k = min(max(k, 0), paletteSize-1)
			img.Set(i, l.Ny-1-j, pal[k])
		}
	}
	return img
}

// raster draws an image over a data rectangle with each image pixel a
// sharp cell: the image is resampled by nearest neighbour to the output
// resolution, so every pixel shows a palette colour of a sample (no
// interpolated colours that no value has).
type raster struct {
	img                    *image.NRGBA
	xmin, xmax, ymin, ymax float64
}

func (r *raster) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	rect := vg.Rectangle{
		Min: vg.Point{X: trX(r.xmin), Y: trY(r.ymin)},
		Max: vg.Point{X: trX(r.xmax), Y: trY(r.ymax)},
	}
	dpi := float64(vgimg.DefaultDPI)
	if d, ok := c.Canvas.(interface{ DPI() float64 }); ok {
		dpi = d.DPI()
	}
	w := max(1, int(math.Round(rect.Size().X.Dots(dpi))))
	h := max(1, int(math.Round(rect.Size().Y.Dots(dpi))))
	src := r.img.Bounds()
	dst := image.NewNRGBA(image.Rect(0, 0, w, h))
	for y := 0; y < h; y++ {
		sy := min(y*src.Dy()/h, src.Dy()-1)
		for x := 0; x < w; x++ {
			sx := min(x*src.Dx()/w, src.Dx()-1)
			dst.SetNRGBA(x, y, r.img.NRGBAAt(sx, sy))
		}
	}
	c.DrawImage(rect, dst)
}

// renderPNG draws a w × h pixel figure with fn and writes it as PNG to
// path atomically, creating the directory if needed. A panic inside the
// plotting library is returned as an error: a figure must never bring a
// finished run down.
func renderPNG(fsys fileSystem, path string, w, h int, fn func(c draw.Canvas)) (err error) {
	img := image.NewRGBA(image.Rect(0, 0, w, h))
	imgdraw.Draw(img, img.Bounds(), image.White, image.Point{}, imgdraw.Src)
	vc := vgimg.NewWith(vgimg.UseImage(img))
	func() {
		defer func() {
			if r := recover(); r != nil {
				err = fmt.Errorf("outputs: figure %s: %v", path, r)
			}
		}()
		fn(draw.New(vc))
	}()
	if err != nil {
		return err
	}
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		return fmt.Errorf("outputs: figure %s: %w", path, err)
	}
	out := vc.Image()
	return writeAtomic(fsys, path, func(tmp tempFile) error {
		b := bufio.NewWriter(tmp)
		if err := png.Encode(b, out); err != nil {
			return err
		}
		return b.Flush()
	})
}

// HeatMap writes a PNG figure of the field data on lattice l: a colour map
// with a colour bar, axis labels and a title. Each sample fills a cell of
// size Dx × Dy centred on it, and the axes keep the data's aspect ratio.
// NaN values are left blank. data must have Nx·Ny values (else it
// panics).
func HeatMap(path string, l Lattice, data []float64, f Frame, cs ColorScale) error {
	l.check("heat map", data)
	return mapFigure(defaultFS, path, l, data, nil, f, cs)
}

// DirectorMap writes a PNG figure of the director field angle (radians
// from the x axis; headless, so θ and θ+π are the same) as short line
// segments over a heat map of background (an order parameter or a
// density), one segment every stride samples in each direction (0: about
// 24 across the longer side). A segment's length is proportional to
// weight (e.g. the local degree of order) relative to its largest value,
// or the same everywhere when weight is nil. Slices must have Nx·Ny values.
func DirectorMap(path string, l Lattice, background, angle, weight []float64, stride int, f Frame, cs ColorScale) error {
	l.check("director map", background, angle)
	if weight != nil {
		l.check("director map weight", weight)
	}
	stride = l.stride(stride)
	wmax := maxAbs(weight)
	half := 0.45 * float64(stride) * math.Min(l.Dx, l.Dy)
	var segs []segment
	for j := stride / 2; j < l.Ny; j += stride {
		for i := stride / 2; i < l.Nx; i += stride {
			k := j*l.Nx + i
			r := half
			if weight != nil {
				if !(wmax > 0) {
					continue
				}
				r *= math.Abs(weight[k]) / wmax
			}
			th := angle[k]
			if math.IsNaN(th) || math.IsInf(th, 0) || !(r > 1e-3*half) {
				continue
			}
			x, y := l.X0+float64(i)*l.Dx, l.Y0+float64(j)*l.Dy
			c, s := r*math.Cos(th), r*math.Sin(th)
			segs = append(segs, segment{x - c, y - s, x + c, y + s})
		}
	}
	return mapFigure(defaultFS, path, l, background, &overlay{segs: segs}, f, cs)
}

// VectorMap writes a PNG figure of the vector field (u, v) (e.g. a
// velocity) as arrows over a heat map of its magnitude, one arrow every
// stride samples (0: about 24 across the longer side), each centred on its
// sample with length proportional to the magnitude (the longest is 0.9
// stride spacings). cs labels the magnitude. Slices must have Nx·Ny values.
func VectorMap(path string, l Lattice, u, v []float64, stride int, f Frame, cs ColorScale) error {
	l.check("vector map", u, v)
	stride = l.stride(stride)
	speed := make([]float64, len(u))
	for k := range u {
		speed[k] = math.Hypot(u[k], v[k])
	}
	smax := maxAbs(speed)
	var segs []segment
	if smax > 0 {
		scale := 0.9 * float64(stride) * math.Min(l.Dx, l.Dy) / smax
		for j := stride / 2; j < l.Ny; j += stride {
			for i := stride / 2; i < l.Nx; i += stride {
				k := j*l.Nx + i
				if !(speed[k] > 1e-3*smax) {
					continue
				}
				x, y := l.X0+float64(i)*l.Dx, l.Y0+float64(j)*l.Dy
				ax, ay := 0.5*scale*u[k], 0.5*scale*v[k]
				segs = append(segs, segment{x - ax, y - ay, x + ax, y + ay})
			}
		}
	}
	if cs.Kind == ScaleAuto {
		cs.Kind = ScaleSequential
	}
	return mapFigure(defaultFS, path, l, speed, &overlay{segs: segs, arrows: true}, f, cs)
}

func (l Lattice) stride(s int) int {
	if s > 0 {
		return s
	}
	return max(1, max(l.Nx, l.Ny)/24)
}

// maxAbs returns the largest finite |v| (0 for none).
func maxAbs(d []float64) float64 {
	m := 0.0
	for _, v := range d {
		if a := math.Abs(v); a > m && !math.IsInf(a, 0) {
			m = a
		}
	}
	return m
}

// segment runs from (x0, y0) to (x1, y1) in data coordinates.
type segment struct{ x0, y0, x1, y1 float64 }

// overlay draws segments (or arrows pointing to the second end) in black
// over a white halo, so that they show on any colour.
type overlay struct {
	segs   []segment
	arrows bool
}

func (o *overlay) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	halo := draw.LineStyle{Color: color.White, Width: vg.Points(2.4)}
	ink := draw.LineStyle{Color: color.Black, Width: vg.Points(1.1)}
	for _, sty := range []draw.LineStyle{halo, ink} {
		for _, s := range o.segs {
			a := vg.Point{X: trX(s.x0), Y: trY(s.y0)}
			b := vg.Point{X: trX(s.x1), Y: trY(s.y1)}
			lines := [][]vg.Point{{a, b}}
			if o.arrows {
				d := b.Sub(a)
				n := vg.Length(math.Hypot(float64(d.X), float64(d.Y)))
				if n > 0 {
					hl := 0.35 * n
					ux, uy := float64(d.X/n), float64(d.Y/n)
					const ca, sa = 0.9063077870366499, 0.42261826174069944 // cos, sin 25°
					l := vg.Point{X: b.X - hl*vg.Length(ca*ux-sa*uy), Y: b.Y - hl*vg.Length(sa*ux+ca*uy)}
					r := vg.Point{X: b.X - hl*vg.Length(ca*ux+sa*uy), Y: b.Y - hl*vg.Length(-sa*ux+ca*uy)}
					lines = append(lines, []vg.Point{l, b, r})
				}
			}
			c.StrokeLines(sty, c.ClipLinesXY(lines...)...)
		}
	}
}

// mapFigure draws the colour map of data with a colour bar and an optional
// overlay, keeping the data aspect ratio.
func mapFigure(fsys fileSystem, path string, l Lattice, data []float64, ov plot.Plotter, f Frame, cs ColorScale) error {
	if l.Nx < 1 || l.Ny < 1 || !(l.Dx > 0) || !(l.Dy > 0) {
		return fmt.Errorf("outputs: figure %s: lattice %d×%d with spacing %g×%g: sizes must be ≥ 1 and spacings > 0", path, l.Nx, l.Ny, l.Dx, l.Dy)
	}
	if f.Height == 0 {
		// Fit the height to the map: the data area takes about 0.84 w − 60
		// px across, and title and x axis about 90 px.
		w := f.Width
		if w == 0 {
			w = 800
		}
		aspect := float64(l.Nx) * l.Dx / (float64(l.Ny) * l.Dy)
		f.Height = int(math.Round(min(max((0.84*float64(w)-60)/aspect+90, 240), 1600)))
	}
	w, h, err := f.size()
	if err != nil {
		return fmt.Errorf("outputs: figure %s: %w", path, err)
	}
	cm, err := cs.resolve(data)
	if err != nil {
		return fmt.Errorf("outputs: figure %s: %w", path, err)
	}
	xmin, xmax := l.X0-l.Dx/2, l.X0+(float64(l.Nx)-0.5)*l.Dx
	ymin, ymax := l.Y0-l.Dy/2, l.Y0+(float64(l.Ny)-0.5)*l.Dy

	p := plot.New()
	p.Title.Text = f.Title
	p.X.Label.Text = f.X.text("x")
	p.Y.Label.Text = f.Y.text("y")
	p.Add(&raster{img: fieldImage(l, data, cm), xmin: xmin, xmax: xmax, ymin: ymin, ymax: ymax})
	if ov != nil {
		p.Add(ov)
	}
	p.X.Min, p.X.Max, p.Y.Min, p.Y.Max = xmin, xmax, ymin, ymax

	bar := plot.New()
	bar.HideX()
	bar.Y.Label.Text = Axis{Label: cs.Label, Unit: cs.Unit}.text("value")
	bar.Add(&plotter.ColorBar{ColorMap: cm, Vertical: true, Colors: paletteSize})
	bar.Y.Min, bar.Y.Max = cm.Min(), cm.Max()

	return renderPNG(fsys, path, w, h, func(c draw.Canvas) {
		barW := 0.16 * (c.Max.X - c.Min.X)
		main := draw.Crop(c, 0, -barW, 0, 0)
		// Crop the map's canvas so that its data area has the data's
		// aspect ratio, centring the map and bar horizontally.
		da := p.DataCanvas(main)
		dw, dh := da.Max.X-da.Min.X, da.Max.Y-da.Min.Y
		want := vg.Length((xmax - xmin) / (ymax - ymin))
		if dw > dh*want {
			s := dw - dh*want
			main = draw.Crop(main, s/2, -s/2, 0, 0)
		} else {
			s := dh - dw/want
			main = draw.Crop(main, 0, 0, s/2, -s/2)
		}
		p.Draw(main)
		da = p.DataCanvas(main)
		gap := 0.02 * (c.Max.X - c.Min.X)
		bc := draw.Canvas{Canvas: c.Canvas, Rectangle: vg.Rectangle{
			Min: vg.Point{X: main.Max.X + gap, Y: da.Min.Y},
			Max: vg.Point{X: main.Max.X + barW, Y: da.Max.Y},
		}}
		bar.Draw(bc)
	})
}

// CurveStyle chooses how a curve is drawn.
type CurveStyle int

const (
	StyleLine       CurveStyle = iota // a line through the points
	StylePoints                       // markers only (e.g. measured values)
	StyleLinePoints                   // both
)

// Curve is one labelled curve of a line plot. X and Y must have the same
// length (else Lines panics).
type Curve struct {
	Label string
	X, Y  []float64
	Style CurveStyle
}

// Lines writes a PNG line plot of curves (time series, spectra,
// correlation functions, growth-rate curves): each curve in its own colour
// (and dash pattern after the seventh), with a legend when a curve has a
// label. Points that are not finite, or not positive on a logarithmic
// axis, are left out and break the line there. It returns an error when
// no curve has a point to draw.
func Lines(path string, curves []Curve, f Frame) error {
	return lines(defaultFS, path, curves, f)
}

func lines(fsys fileSystem, path string, curves []Curve, f Frame) error {
	w, h, err := f.size()
	if err != nil {
		return fmt.Errorf("outputs: figure %s: %w", path, err)
	}
	for _, a := range []Axis{f.X, f.Y} {
		if a.Log && a.Min < a.Max && a.Min <= 0 {
			return fmt.Errorf("outputs: figure %s: logarithmic axis %q with minimum %g: must be > 0", path, a.Label, a.Min)
		}
	}
	p := plot.New()
	p.Title.Text = f.Title
	p.X.Label.Text = f.X.text("x")
	p.Y.Label.Text = f.Y.text("y")
	grid := plotter.NewGrid()
	grid.Vertical.Color = color.Gray{Y: 220}
	grid.Horizontal.Color = color.Gray{Y: 220}
	p.Add(grid)
	for _, ax := range []struct {
		a *plot.Axis
		f Axis
	}{{&p.X, f.X}, {&p.Y, f.Y}} {
		if ax.f.Log {
			ax.a.Scale = plot.LogScale{}
			ax.a.Tick.Marker = plot.LogTicks{Prec: 3}
		}
	}
	drawn := 0
	for i, cv := range curves {
		if len(cv.X) != len(cv.Y) {
			panic(fmt.Sprintf("outputs: curve %q has %d x and %d y values", cv.Label, len(cv.X), len(cv.Y)))
		}
		ls := draw.LineStyle{Color: plotutil.Color(i), Width: vg.Points(1.6)}
		if i >= len(plotutil.DefaultColors) {
			ls.Dashes = plotutil.Dashes(i / len(plotutil.DefaultColors))
		}
		gs := draw.GlyphStyle{Color: plotutil.Color(i), Radius: vg.Points(2.5), Shape: plotutil.Shape(i)}
		var lineThumb, pointThumb plot.Thumbnailer
		for _, run := range validRuns(cv.X, cv.Y, f.X.Log, f.Y.Log) {
			drawn += len(run)
			if cv.Style != StylePoints {
				l, err := plotter.NewLine(run)
				if err != nil {
					return fmt.Errorf("outputs: figure %s: curve %q: %w", path, cv.Label, err)
				}
				l.LineStyle = ls
				p.Add(l)
				lineThumb = l
			}
			if cv.Style != StyleLine {
				s, err := plotter.NewScatter(run)
				if err != nil {
					return fmt.Errorf("outputs: figure %s: curve %q: %w", path, cv.Label, err)
				}
				s.GlyphStyle = gs
				p.Add(s)
				pointThumb = s
			}
		}
		var thumbs []plot.Thumbnailer
		for _, t := range []plot.Thumbnailer{lineThumb, pointThumb} {
			if t != nil {
				thumbs = append(thumbs, t)
			}
		}
		if cv.Label != "" && thumbs != nil {
			p.Legend.Add(cv.Label, thumbs...)
		}
	}
	if drawn == 0 {
		return fmt.Errorf("outputs: figure %s: no curve has a point to draw", path)
	}
	if f.X.Min < f.X.Max {
		p.X.Min, p.X.Max = f.X.Min, f.X.Max
	}
	if f.Y.Min < f.Y.Max {
		p.Y.Min, p.Y.Max = f.Y.Min, f.Y.Max
	}
	p.Legend.Top = true
	return renderPNG(fsys, path, w, h, func(c draw.Canvas) { p.Draw(c) })
}

// validRuns splits a curve into runs of drawable points.
func validRuns(x, y []float64, logX, logY bool) []plotter.XYs {
	ok := func(v float64, log bool) bool {
		return !math.IsNaN(v) && !math.IsInf(v, 0) && (!log || v > 0)
	}
	var runs []plotter.XYs
	var cur plotter.XYs
	for i := range x {
		if ok(x[i], logX) && ok(y[i], logY) {
			cur = append(cur, plotter.XY{X: x[i], Y: y[i]})
			continue
		}
		if len(cur) > 0 {
			runs = append(runs, cur)
			cur = nil
		}
	}
	if len(cur) > 0 {
		runs = append(runs, cur)
	}
	return runs
}
