package outputs

import (
	"errors"
	"image"
	"image/color"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"syscall"
	"testing"

	"gonum.org/v1/plot/palette"
	"gonum.org/v1/plot/palette/moreland"
	"gonum.org/v1/plot/plotutil"
)

func decodePNG(t *testing.T, path string) image.Image {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatalf("%s is not a valid PNG: %v", path, err)
	}
	return img
}

func rgb(c color.Color) (r, g, b float64) {
	R, G, B, _ := c.RGBA()
	return float64(R >> 8), float64(G >> 8), float64(B >> 8)
}

func colorDist(a, b color.Color) float64 {
	r1, g1, b1 := rgb(a)
	r2, g2, b2 := rgb(b)
	return math.Sqrt((r1-r2)*(r1-r2) + (g1-g2)*(g1-g2) + (b1-b2)*(b1-b2))
}

// refPalette is the documented colour map, built here from gonum's palette
// package independently of the code under test.
func refPalette(diverging bool) []color.Color {
	var cm palette.ColorMap = moreland.Kindlmann()
	top := 0.95 // the sequential map stops at 95 % luminance
	if diverging {
		cm, top = moreland.SmoothBlueRed(), 1
	}
	cm.SetMin(0)
	cm.SetMax(1)
	pal := make([]color.Color, 256)
	for i := range pal {
		var err error
		if pal[i], err = cm.At(top * float64(i) / 255); err != nil {
			panic(err)
		}
	}
	return pal
}

// nearest returns the index of the palette colour closest to c and its
// distance (0–441 in 8-bit RGB).
func nearest(pal []color.Color, c color.Color) (int, float64) {
	best, bd := -1, math.Inf(1)
	for i, p := range pal {
		if d := colorDist(p, c); d < bd {
			best, bd = i, d
		}
	}
	return best, bd
}

// paletteTol is the largest RGB distance at which a pixel counts as a
// palette colour: adjacent entries of these 256-colour maps differ by at
// most about 5, and scaling the image blends neighbours only.
const paletteTol = 6.0

// paletteRun returns the palette indices along the longest run of palette
// coloured pixels on the line of pixels given by at, and where it starts.
// A run bridges up to two pixels that match no palette colour (where the
// image blends two neighbouring cells); those are skipped.
func paletteRun(pal []color.Color, n int, at func(k int) color.Color) (idx []int, start int) {
	var cur []int
	cs, miss := 0, 0
	for k := 0; k <= n; k++ {
		if k < n {
			if i, d := nearest(pal, at(k)); d <= paletteTol {
				if cur == nil {
					cs = k
				}
				cur = append(cur, i)
				miss = 0
				continue
			}
			if miss++; cur != nil && miss <= 2 {
				continue
			}
		}
		if len(cur) > len(idx) {
			idx, start = cur, cs
		}
		cur = nil
	}
	return idx, start
}

func monotone(idx []int, increasing bool) bool {
	for k := 1; k < len(idx); k++ {
		if increasing && idx[k] < idx[k-1] || !increasing && idx[k] > idx[k-1] {
			return false
		}
	}
	return true
}

// ramp returns the field v(i, j) = f(i, j) on l.
func ramp(l Lattice, f func(i, j int) float64) []float64 {
	d := make([]float64, l.Nx*l.Ny)
	for j := 0; j < l.Ny; j++ {
		for i := 0; i < l.Nx; i++ {
			d[j*l.Nx+i] = f(i, j)
		}
	}
	return d
}

// A heat map of a field that grows with x shows the palette from its first
// to its last colour, left to right, in order; one that grows with y shows
// it from bottom to top (y points up); the file is a PNG of the requested
// size.
func TestHeatMapColourOrder(t *testing.T) {
	dir := t.TempDir()
	pal := refPalette(false)
	frame := Frame{Title: "ramp", X: Axis{Unit: "ℓ0"}, Y: Axis{Unit: "ℓ0"}, Width: 640, Height: 480}

	lx := Lattice{Nx: 64, Ny: 16, Dx: 1, Dy: 1}
	px := filepath.Join(dir, "figures", "ramp_x.png") // the directory is created
	if err := HeatMap(px, lx, ramp(lx, func(i, j int) float64 { return float64(i) }), frame, ColorScale{Label: "c", Unit: "1"}); err != nil {
		t.Fatal(err)
	}
	img := decodePNG(t, px)
	if b := img.Bounds(); b.Dx() != 640 || b.Dy() != 480 {
		t.Fatalf("size %v, want 640×480", b.Size())
	}
	y := 240
	idx, x0 := paletteRun(pal, 640, func(k int) color.Color { return img.At(k, y) })
	if len(idx) < 300 {
		t.Fatalf("longest palette-coloured run on row %d is %d px; the map should span > 300", y, len(idx))
	}
	if !monotone(idx, true) || idx[0] > 8 || idx[len(idx)-1] < 247 {
		t.Errorf("x ramp: palette indices along row %d from x=%d go %d … %d, monotone %v; want 0…255 increasing",
			y, x0, idx[0], idx[len(idx)-1], monotone(idx, true))
	}

	ly := Lattice{Nx: 16, Ny: 64, Dx: 1, Dy: 1}
	py := filepath.Join(dir, "ramp_y.png")
	frame.Width, frame.Height = 480, 640
	if err := HeatMap(py, ly, ramp(ly, func(i, j int) float64 { return float64(j) }), frame, ColorScale{}); err != nil {
		t.Fatal(err)
	}
	img = decodePNG(t, py)
	// Find the map's columns on the middle row, then walk its middle column
	// from top to bottom.
	row, x0 := paletteRun(pal, 480, func(k int) color.Color { return img.At(k, 320) })
	if len(row) < 50 {
		t.Fatalf("no map found on the middle row of the y ramp")
	}
	xc := x0 + len(row)/2
	idx, _ = paletteRun(pal, 640, func(k int) color.Color { return img.At(xc, k) })
	if len(idx) < 300 || !monotone(idx, false) || idx[0] < 247 || idx[len(idx)-1] > 8 {
		t.Errorf("y ramp: %d px run on column %d, indices %d … %d, decreasing downwards %v; want 255…0",
			len(idx), xc, idx[0], idx[len(idx)-1], monotone(idx, false))
	}
}

// A signed field gets the diverging map on a range symmetric about zero:
// zero is the palette's centre, and the most negative value −16 of the
// range [−16, 47] sits at (−16 + 47)/94 of the palette.
func TestHeatMapDivergingCentre(t *testing.T) {
	path := filepath.Join(t.TempDir(), "signed.png")
	l := Lattice{Nx: 64, Ny: 8, Dx: 1, Dy: 1}
	if err := HeatMap(path, l, ramp(l, func(i, j int) float64 { return float64(i - 16) }), Frame{Width: 800, Height: 400}, ColorScale{}); err != nil {
		t.Fatal(err)
	}
	img := decodePNG(t, path)
	pal := refPalette(true)
	idx, x0 := paletteRun(pal, 800, func(k int) color.Color { return img.At(k, 200) })
	if len(idx) < 300 || !monotone(idx, true) {
		t.Fatalf("run of %d px, monotone %v", len(idx), monotone(idx, true))
	}
	// The run covers the cells of i = 0…63, i.e. x ∈ [−0.5, 63.5].
	atX := func(x float64) int { return idx[int((x+0.5)/64*float64(len(idx)))] }
	// Tolerance: one cell spans 256·64/94/64 ≈ 2.7 palette entries, plus
	// one pixel of blending at the cell edge: ±4.
	if got := atX(16); math.Abs(float64(got)-127.5) > 4 {
		t.Errorf("palette index at the zero of the data = %d, want 127.5 ± 4", got)
	}
	if got, want := idx[0], 255*31.0/94; math.Abs(float64(got)-want) > 4 {
		t.Errorf("palette index at the minimum −16 = %d, want %.1f ± 4", got, want)
	}
	if got := idx[len(idx)-1]; got < 251 {
		t.Errorf("palette index at the maximum 47 = %d, want 255 − 4", got)
	}
	// The diverging map is blue below zero and red above.
	r, _, b := rgb(pal[idx[0]])
	r2, _, b2 := rgb(pal[idx[len(idx)-1]])
	if !(b > r && r2 > b2) {
		t.Errorf("negative end rgb %v,%v, positive end %v,%v: want blue then red", r, b, r2, b2)
	}
	_ = x0
}

// overlayMask renders the same frame twice, once with an overlay and once
// as a plain heat map of the same background, and returns the pixels that
// differ: the overlay.
func overlayMask(t *testing.T, withOverlay func(path string) error, plain func(path string) error) (mask [][2]int) {
	t.Helper()
	dir := t.TempDir()
	a, b := filepath.Join(dir, "a.png"), filepath.Join(dir, "b.png")
	if err := withOverlay(a); err != nil {
		t.Fatal(err)
	}
	if err := plain(b); err != nil {
		t.Fatal(err)
	}
	ia, ib := decodePNG(t, a), decodePNG(t, b)
	if ia.Bounds() != ib.Bounds() {
		t.Fatalf("sizes differ: %v %v", ia.Bounds(), ib.Bounds())
	}
	r := ia.Bounds()
	for y := r.Min.Y; y < r.Max.Y; y++ {
		for x := r.Min.X; x < r.Max.X; x++ {
			if colorDist(ia.At(x, y), ib.At(x, y)) > 30 {
				mask = append(mask, [2]int{x, y})
			}
		}
	}
	if len(mask) == 0 {
		t.Fatal("the overlay changed no pixel")
	}
	return mask
}

type maskStats struct {
	w, h           int     // bounding box
	cx, cy         float64 // centroid
	corr           float64 // correlation of x and image y (y down)
	x0, y0, x1, y1 int
}

func stats(m [][2]int) maskStats {
	s := maskStats{x0: math.MaxInt, y0: math.MaxInt, x1: -1, y1: -1}
	for _, p := range m {
		s.x0, s.y0 = min(s.x0, p[0]), min(s.y0, p[1])
		s.x1, s.y1 = max(s.x1, p[0]), max(s.y1, p[1])
		s.cx += float64(p[0])
		s.cy += float64(p[1])
	}
	n := float64(len(m))
	s.cx /= n
	s.cy /= n
	var vx, vy, cxy float64
	for _, p := range m {
		dx, dy := float64(p[0])-s.cx, float64(p[1])-s.cy
		vx, vy, cxy = vx+dx*dx, vy+dy*dy, cxy+dx*dy
	}
	s.corr = cxy / math.Sqrt(vx*vy)
	s.w, s.h = s.x1-s.x0+1, s.y1-s.y0+1
	return s
}

// One director segment, at lattice point (10, 10) of a 16 × 16 lattice,
// drawn at θ = 0, π/2, π/4 and −π/4: its pixels must be wide, tall, and
// rising or falling to the right as θ says (y up), and lie right of and
// above the map's centre (7.5, 7.5).
func TestDirectorMapAngles(t *testing.T) {
	l := Lattice{Nx: 16, Ny: 16, Dx: 1, Dy: 1}
	bg := ramp(l, func(i, j int) float64 { return 1 })
	weight := ramp(l, func(i, j int) float64 {
		if i == 10 && j == 10 {
			return 1
		}
		return 0
	})
	f := Frame{Title: "directors", Width: 320, Height: 320}
	plain := func(p string) error { return HeatMap(p, l, bg, f, ColorScale{}) }
	centre := stats(overlayMask(t, func(p string) error {
		// A vertical segment at every point marks the map centre.
		w := ramp(l, func(i, j int) float64 { return 1 })
		return DirectorMap(p, l, bg, ramp(l, func(i, j int) float64 { return math.Pi / 2 }), w, 1, f, ColorScale{})
	}, plain))
	for _, c := range []struct {
		name  string
		theta float64
		check func(s maskStats) bool
	}{
		{"θ = 0", 0, func(s maskStats) bool { return s.w > 4*s.h }},
		{"θ = π/2", math.Pi / 2, func(s maskStats) bool { return s.h > 4*s.w }},
		{"θ = π/4", math.Pi / 4, func(s maskStats) bool { return s.corr < -0.8 }},
		{"θ = −π/4", -math.Pi / 4, func(s maskStats) bool { return s.corr > 0.8 }},
	} {
		s := stats(overlayMask(t, func(p string) error {
			return DirectorMap(p, l, bg, ramp(l, func(i, j int) float64 { return c.theta }), weight, 4, f, ColorScale{})
		}, plain))
		if !c.check(s) {
			t.Errorf("%s: segment box %d×%d px, correlation of x and image y %.2f", c.name, s.w, s.h, s.corr)
		}
		if !(s.cx > centre.cx+10 && s.cy < centre.cy-10) {
			t.Errorf("%s: segment centred at (%.0f, %.0f) px, map centre (%.0f, %.0f): want right of and above it",
				c.name, s.cx, s.cy, centre.cx, centre.cy)
		}
	}
}

// One arrow: its head (the columns or rows where the arrow is widest
// across its direction) must be at the end the vector points to.
func TestVectorMapDirection(t *testing.T) {
	l := Lattice{Nx: 16, Ny: 16, Dx: 1, Dy: 1}
	f := Frame{Title: "velocity", Width: 320, Height: 320}
	cs := ColorScale{Label: "|u|", Unit: "ℓ0/τ0", Kind: ScaleSequential}
	for _, c := range []struct {
		name   string
		ux, uy float64
	}{{"+x", 1, 0}, {"−x", -1, 0}, {"+y", 0, 1}, {"−y", 0, -1}} {
		u := ramp(l, func(i, j int) float64 {
			if i == 10 && j == 10 {
				return c.ux
			}
			return 0
		})
		v := ramp(l, func(i, j int) float64 {
			if i == 10 && j == 10 {
				return c.uy
			}
			return 0
		})
		speed := ramp(l, func(i, j int) float64 { return math.Hypot(u[j*16+i], v[j*16+i]) })
		m := overlayMask(t, func(p string) error { return VectorMap(p, l, u, v, 4, f, cs) },
			func(p string) error { return HeatMap(p, l, speed, f, cs) })
		s := stats(m)
		horizontal := c.uy == 0
		if horizontal && s.w < 2*s.h || !horizontal && s.h < 2*s.w {
			t.Errorf("%s: arrow box %d×%d px", c.name, s.w, s.h)
			continue
		}
		// Count pixels per column (horizontal arrow) or row (vertical).
		counts := map[int]int{}
		for _, p := range m {
			if horizontal {
				counts[p[0]]++
			} else {
				counts[p[1]]++
			}
		}
		best, at := 0, 0
		for k, n := range counts {
			if n > best {
				best, at = n, k
			}
		}
		mid := (s.x0 + s.x1) / 2
		if !horizontal {
			mid = (s.y0 + s.y1) / 2
		}
		// Image y grows downwards: an arrow pointing +y has its head at
		// small image y.
		headHigh := c.ux > 0 || c.uy < 0
		if headHigh && at <= mid || !headHigh && at >= mid {
			t.Errorf("%s: widest part of the arrow at %d px, middle %d: head at the wrong end", c.name, at, mid)
		}
	}
}

// On a logarithmic y axis an exponential decay is a straight line: the
// curve's pixels fit a line to within the line width. On a linear axis the
// same curve is visibly bent, which shows the check can fail.
func TestLinesLogAxis(t *testing.T) {
	x := make([]float64, 200)
	y := make([]float64, 200)
	for i := range x {
		x[i] = float64(i) * 0.05
		y[i] = math.Exp(-x[i])
	}
	residual := func(log bool) float64 {
		path := filepath.Join(t.TempDir(), "series.png")
		f := Frame{Title: "decay", X: Axis{Label: "time", Unit: "τ0"}, Y: Axis{Label: "variance", Unit: "1", Log: log}, Width: 700, Height: 500}
		if err := Lines(path, []Curve{{X: x, Y: y}}, f); err != nil {
			t.Fatal(err)
		}
		img := decodePNG(t, path)
		want := plotutil.Color(0)
		var px, py []float64
		b := img.Bounds()
		for j := b.Min.Y; j < b.Max.Y; j++ {
			for i := b.Min.X; i < b.Max.X; i++ {
				if colorDist(img.At(i, j), want) < 40 {
					px = append(px, float64(i))
					py = append(py, float64(j))
				}
			}
		}
		if len(px) < 300 {
			t.Fatalf("found %d pixels of the curve's colour", len(px))
		}
		// Least-squares line py = a + b px and the largest residual.
		var sx, sy, sxx, sxy float64
		for k := range px {
			sx += px[k]
			sy += py[k]
			sxx += px[k] * px[k]
			sxy += px[k] * py[k]
		}
		n := float64(len(px))
		bb := (n*sxy - sx*sy) / (n*sxx - sx*sx)
		a := (sy - bb*sx) / n
		worst := 0.0
		for k := range px {
			worst = math.Max(worst, math.Abs(py[k]-a-bb*px[k]))
		}
		return worst
	}
	// The line is 1.6 pt ≈ 2.1 px wide plus anti-aliasing: a straight line
	// stays within 3 px of its fit.
	if r := residual(true); r > 3 {
		t.Errorf("log axis: largest distance from a straight line %.1f px, want ≤ 3", r)
	}
	if r := residual(false); r < 30 {
		t.Errorf("linear axis: largest distance from a straight line %.1f px; an exponential should bend by far more than 30", r)
	}
}

func TestLinesRobustAndErrors(t *testing.T) {
	dir := t.TempDir()
	// Non-finite and non-positive points are left out, the rest drawn.
	c := []Curve{
		{Label: "growth", X: []float64{0, 1, 2, 3, 4}, Y: []float64{1, math.NaN(), 0, 4, -1}, Style: StyleLinePoints},
		{Label: "theory", X: []float64{0, 4}, Y: []float64{1, 16}},
		{Label: "measured", X: []float64{1, 2}, Y: []float64{math.Inf(1), 3}, Style: StylePoints},
	}
	path := filepath.Join(dir, "ok.png")
	if err := Lines(path, c, Frame{Y: Axis{Log: true}}); err != nil {
		t.Fatal(err)
	}
	img := decodePNG(t, path)
	if b := img.Bounds(); b.Dx() != 800 || b.Dy() != 600 {
		t.Errorf("default size %v, want 800×600", b.Size())
	}
	mustContain(t, Lines(filepath.Join(dir, "none.png"), []Curve{{X: []float64{1, 2}, Y: []float64{0, -1}}}, Frame{Y: Axis{Log: true}}),
		"no curve has a point to draw")
	mustContain(t, Lines(filepath.Join(dir, "min.png"), c, Frame{Y: Axis{Label: "rate", Log: true, Min: 0, Max: 10}}),
		`logarithmic axis "rate" with minimum 0`)
	mustContain(t, Lines(filepath.Join(dir, "big.png"), c, Frame{Width: 20000}), "figure size 20000×600 px")
	for _, n := range []string{"none.png", "min.png", "big.png"} {
		if _, err := os.Stat(filepath.Join(dir, n)); err == nil {
			t.Errorf("a failed figure left %s", n)
		}
	}
}

func TestHeatMapEdgeCases(t *testing.T) {
	dir := t.TempDir()
	l := Lattice{Nx: 8, Ny: 8, Dx: 0.5, Dy: 0.5}
	// A constant field and a field with holes still render.
	if err := HeatMap(filepath.Join(dir, "const.png"), l, ramp(l, func(i, j int) float64 { return 3 }), Frame{}, ColorScale{}); err != nil {
		t.Error(err)
	}
	holes := ramp(l, func(i, j int) float64 { return float64(i * j) })
	holes[5] = math.NaN()
	if err := HeatMap(filepath.Join(dir, "holes.png"), l, holes, Frame{}, ColorScale{}); err != nil {
		t.Error(err)
	}
	nan := ramp(l, func(i, j int) float64 { return math.NaN() })
	mustContain(t, HeatMap(filepath.Join(dir, "nan.png"), l, nan, Frame{}, ColorScale{}), "no finite value")
	bad := l
	bad.Dx = 0
	mustContain(t, HeatMap(filepath.Join(dir, "bad.png"), bad, holes, Frame{}, ColorScale{}), "spacings > 0")
	defer func() {
		if recover() == nil {
			t.Error("a field of the wrong length did not panic")
		}
	}()
	HeatMap(filepath.Join(dir, "short.png"), l, holes[1:], Frame{}, ColorScale{})
}

// A figure is replaced atomically: a failed write keeps the previous one.
func TestFigureWriteFailure(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "phi.png")
	l := Lattice{Nx: 8, Ny: 8, Dx: 1, Dy: 1}
	d := ramp(l, func(i, j int) float64 { return float64(i + j) })
	if err := HeatMap(path, l, d, Frame{}, ColorScale{}); err != nil {
		t.Fatal(err)
	}
	before := readAll(t, dir)
	fs := newFaultFS()
	fs.writeLimit = 1000
	err := mapFigure(fs, path, l, d, nil, Frame{Title: "new"}, ColorScale{})
	mustContain(t, err, path)
	if !errors.Is(err, syscall.ENOSPC) {
		t.Errorf("%v does not wrap ENOSPC", err)
	}
	sameFiles(t, dir, before)
}
