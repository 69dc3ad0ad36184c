package scan

// The comparison figures of Gather, drawn with the outputs package's line
// plots (outputs.Lines), which also draw the figures of a single run.

import (
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"sort"
	"strings"

	"github.com/memix-sim/memix/outputs"
)

// maxFigures bounds the figures one Gather draws.
const maxFigures = 200

// maxLegend is the largest number of curves given a legend entry.
const maxLegend = 16

// maxCurves bounds the curves of one overlay figure.
const maxCurves = 100

// The series.csv columns of the overlay figures (docs/outputs.md).
const (
	seriesTime    = "time_si" // model time in s
	seriesMixNorm = "mixnorm" // multiscale mix-norm, dimensionless
)

var unsafeName = regexp.MustCompile(`[^A-Za-z0-9._=-]+`)

func fileName(parts ...string) string {
	return unsafeName.ReplaceAllString(strings.Join(parts, "-"), "_") + ".png"
}

// A curveFigure is one figure to draw with outputs.Lines.
type curveFigure struct {
	name   string
	curves []outputs.Curve
	frame  outputs.Frame
}

// drawFigures writes the comparison figures into dir and returns their paths.
func drawFigures(sc *Scan, t *Table, conv Converter, dir string) ([]string, error) {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, err
	}
	figs := mixNormFigures(sc, t)
	figs = append(figs, summaryFigures(t, conv)...)
	var files []string
	var errs []error
	for _, f := range figs {
		if len(files) >= maxFigures {
			break
		}
		path := filepath.Join(dir, f.name)
		if err := outputs.Lines(path, f.curves, f.frame); err != nil {
			errs = append(errs, err)
			continue
		}
		files = append(files, path)
	}
	return files, errors.Join(errs...)
}

// finishedRows returns the rows of finished points.
func finishedRows(t *Table) []Row {
	var rows []Row
	for _, r := range t.Rows {
		if r.State == Finished {
			rows = append(rows, r)
		}
	}
	return rows
}

// mixNormFigures overlays the mix-norm curves of the finished points, each
// divided by its initial value, against the model time in seconds; each
// curve is labelled by the parameters that vary between the points.
func mixNormFigures(sc *Scan, t *Table) []curveFigure {
	rows := finishedRows(t)
	vary := varying(rows)
	var curves []outputs.Curve
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, r := range rows {
		if len(curves) == maxCurves {
			break
		}
		cols, data, err := outputs.ReadSeries(filepath.Join(sc.OutDir(r.ID), seriesFile))
		if err != nil {
			continue
		}
		ti, mi := -1, -1
		for j, c := range cols {
			switch c.Name {
			case seriesTime:
				ti = j
			case seriesMixNorm:
				mi = j
			}
		}
		if ti < 0 || mi < 0 || len(data) == 0 {
			continue
		}
		first := data[0][mi]
		if first == 0 || math.IsNaN(first) || math.IsInf(first, 0) {
			continue
		}
		c := outputs.Curve{Label: label(r.Params, vary)}
		for _, row := range data {
			y := row[mi] / first
			c.X, c.Y = append(c.X, row[ti]), append(c.Y, y)
			if !math.IsNaN(y) && !math.IsInf(y, 0) {
				lo, hi = math.Min(lo, y), math.Max(hi, y)
			}
		}
		curves = append(curves, c)
	}
	if len(curves) == 0 {
		return nil
	}
	if len(curves) > maxLegend {
		for i := range curves {
			curves[i].Label = ""
		}
	}
	title := "mix-norm of each point (model predictions)"
	if n := len(rows); n > len(curves) {
		title = fmt.Sprintf("mix-norm of the first %d of %d points (model predictions)", len(curves), n)
	}
	return []curveFigure{{
		name:   fileName(seriesMixNorm),
		curves: curves,
		frame: outputs.Frame{
			Title: title,
			X:     outputs.Axis{Label: "time", Unit: "s"},
			// Logarithmic when every value is positive and they span a decade.
			Y: outputs.Axis{Label: "mix-norm / initial mix-norm", Log: lo > 0 && hi >= 10*lo},
		},
	}}
}

// axisPositions puts an axis on a numeric scale: numbers as they are,
// quantities converted to the unit of the axis (or of its first value).
// A point without a value on the axis (a null, say the depth of a deep
// subphase in a zipped sweep) gets NaN. ok is false when a value is
// neither: the axis is then categorical.
func axisPositions(a AxisInfo, rows []Row, conv Converter) (xs []float64, unit string, ok bool) {
	unit = a.Unit
	unitSet := unit != ""
	for _, r := range rows {
		v, _ := (&Point{Params: r.Params}).Param(a.Key)
		switch v := v.(type) {
		case nil:
			xs = append(xs, math.NaN())
		case float64:
			xs = append(xs, v)
		case string:
			if !unitSet {
				_, u, err := splitQuantity(v)
				if err != nil {
					return nil, "", false
				}
				unit, unitSet = u, true
			}
			x, err := conv(v, unit)
			if err != nil {
				return nil, "", false
			}
			xs = append(xs, x)
		default:
			return nil, "", false
		}
	}
	return xs, unit, true
}

// categories numbers the distinct values of a categorical axis 1, 2, ...
// in order of appearance; a point without a value gets NaN.
func categories(a AxisInfo, rows []Row) (xs []float64, names []string) {
	seen := map[string]int{}
	for _, r := range rows {
		v, _ := (&Point{Params: r.Params}).Param(a.Key)
		if v == nil {
			xs = append(xs, math.NaN())
			continue
		}
		s := Param{Value: v}.Text()
		if _, ok := seen[s]; !ok {
			names = append(names, s)
			seen[s] = len(names)
		}
		xs = append(xs, float64(seen[s]))
	}
	return xs, names
}

// summaryFigures draws each figure key of the table against each axis that
// takes at least two values among the finished points. Points that differ
// in the other axes form separate curves, except in axes that determine
// this one (the partner of a zipped axis): a curve joins the means over
// replicates (and over such partners), and the single values are drawn as
// points beside it. Points without a value on the axis are drawn as a
// horizontal line across it, labelled "(no KEY)".
func summaryFigures(t *Table, conv Converter) []curveFigure {
	rows := finishedRows(t)
	if len(rows) == 0 {
		return nil
	}
	vary := varying(rows)
	var figs []curveFigure
	for _, a := range t.Axes {
		if a.Seed || !vary[a.Key] {
			continue
		}
		xs, unit, numeric := axisPositions(a, rows, conv)
		xAxis := outputs.Axis{Label: a.Key, Unit: unit, Log: a.Log}
		if !numeric {
			var names []string
			xs, names = categories(a, rows)
			parts := make([]string, len(names))
			for i, n := range names {
				parts[i] = fmt.Sprintf("%d = %s", i+1, n)
			}
			xAxis = outputs.Axis{Label: a.Key + " (" + strings.Join(parts, ", ") + ")", Min: 0, Max: float64(len(names)) + 1}
		}
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, x := range xs {
			if !math.IsNaN(x) {
				lo, hi = math.Min(lo, x), math.Max(hi, x)
			}
		}
		if !(lo < hi) {
			continue // fewer than two positions
		}
		if numeric && !a.Log {
			xAxis.Log = lo > 0 && hi/lo >= 100
		}
		// Group by the other varied axes, leaving out those that
		// determine this one.
		others := map[string]bool{}
		for _, b := range t.Axes {
			if b.Key != a.Key && !b.Seed && vary[b.Key] && !determines(rows, b.Key, a.Key) {
				others[b.Key] = true
			}
		}
		groupOf := make([]string, len(rows))
		var groups []string
		for i, r := range rows {
			g := label(r.Params, others)
			groupOf[i] = g
			if !slices.Contains(groups, g) {
				groups = append(groups, g)
			}
		}
		for _, k := range t.figureKeys() {
			if constant(rows, k.Key) {
				continue
			}
			var curves []outputs.Curve
			for _, g := range groups {
				curves = append(curves, groupCurves(rows, xs, groupOf, g, k.Key, lo, hi, shortKey(a.Key))...)
			}
			if len(curves) == 0 {
				continue
			}
			if len(curves) > maxLegend {
				for i := range curves {
					curves[i].Label = ""
				}
			}
			figs = append(figs, curveFigure{
				name:   fileName(k.Key, "vs", a.Key),
				curves: curves,
				frame: outputs.Frame{
					Title: k.Title + " against " + shortKey(a.Key) + " (model predictions)",
					X:     xAxis,
					Y:     outputs.Axis{Label: k.Title, Unit: k.Unit},
				},
			})
		}
	}
	return figs
}

// groupCurves returns the curves of one group in a summary figure: the
// mean at each position (a line with points), the single values when a
// position has several (points), and for the group's points without a
// position a horizontal line over [lo, hi].
func groupCurves(rows []Row, xs []float64, groupOf []string, g, key string, lo, hi float64, axis string) []outputs.Curve {
	type acc struct{ sum, n float64 }
	sums := map[float64]*acc{}
	var single outputs.Curve
	var none acc
	for i, r := range rows {
		y, ok := r.Results[key]
		if groupOf[i] != g || !ok {
			continue
		}
		if math.IsNaN(xs[i]) {
			none.sum, none.n = none.sum+y, none.n+1
			continue
		}
		if sums[xs[i]] == nil {
			sums[xs[i]] = &acc{}
		}
		sums[xs[i]].sum += y
		sums[xs[i]].n++
		single.X, single.Y = append(single.X, xs[i]), append(single.Y, y)
	}
	var out []outputs.Curve
	if len(sums) > 0 {
		mean := outputs.Curve{Label: g, Style: outputs.StyleLinePoints}
		var pos []float64
		several := false
		for x, s := range sums {
			pos = append(pos, x)
			several = several || s.n > 1
		}
		sort.Float64s(pos)
		for _, x := range pos {
			mean.X, mean.Y = append(mean.X, x), append(mean.Y, sums[x].sum/sums[x].n)
		}
		if several {
			mean.Label = withLabel(g, "mean")
			single.Label, single.Style = withLabel(g, "each point"), outputs.StylePoints
			out = append(out, mean, single)
		} else {
			out = append(out, mean)
		}
	}
	if none.n > 0 {
		m := none.sum / none.n
		out = append(out, outputs.Curve{Label: withLabel(g, "no "+axis), X: []float64{lo, hi}, Y: []float64{m, m}})
	}
	return out
}

func withLabel(g, s string) string {
	if g == "" {
		return s
	}
	return g + " (" + s + ")"
}

// determines reports whether the value of axis b fixes the value of axis a
// over rows (as when a and b are zipped).
func determines(rows []Row, b, a string) bool {
	m := map[string]string{}
	for _, r := range rows {
		p := &Point{Params: r.Params}
		vb, _ := p.Param(b)
		va, _ := p.Param(a)
		kb, ka := Param{Value: vb}.Text(), Param{Value: va}.Text()
		if old, ok := m[kb]; ok && old != ka {
			return false
		}
		m[kb] = ka
	}
	return true
}

// constant reports whether result k takes at most one value over rows.
func constant(rows []Row, k string) bool {
	first, seen := 0.0, false
	for _, r := range rows {
		v, ok := r.Results[k]
		if !ok {
			continue
		}
		if seen && v != first {
			return false
		}
		first, seen = v, true
	}
	return true
}

// varying returns the keys whose value differs between rows.
func varying(rows []Row) map[string]bool {
	first := map[string]string{}
	out := map[string]bool{}
	for _, r := range rows {
		for _, p := range r.Params {
			v := p.Text()
			if f, ok := first[p.Key]; !ok {
				first[p.Key] = v
			} else if f != v {
				out[p.Key] = true
			}
		}
	}
	return out
}

// label is "k=v, k=v" over the given keys, in parameter order; keys
// without a value (null) are left out.
func label(params []Param, keys map[string]bool) string {
	var parts []string
	for _, p := range params {
		if keys[p.Key] && p.Value != nil {
			parts = append(parts, shortKey(p.Key)+"="+p.Text())
		}
	}
	return strings.Join(parts, ", ")
}

// unitOfKey guesses the unit of a summary number from its name's suffix
// (the naming rule of summary.json: _s, _per_s, _m).
func unitOfKey(k string) string {
	last := k[strings.LastIndexByte(k, '.')+1:]
	switch {
	case strings.HasSuffix(last, "_per_s"):
		return "1/s"
	case strings.HasSuffix(last, "_s"):
		return "s"
	case strings.HasSuffix(last, "_m"):
		return "m"
	case strings.HasPrefix(k, "domain_length_m."):
		return "m"
	}
	return ""
}
