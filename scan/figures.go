package scan

// The figures of Gather, drawn with gonum/plot directly. When the outputs
// package has its plotting helpers, drawFigures can switch to them; the
// data it plots is already in results.csv and the points' series.csv.

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"sort"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/plotutil"
	"gonum.org/v1/plot/vg"
)

// maxFigures bounds the figures one Gather draws.
const maxFigures = 200

// maxLegend is the largest number of curves given a legend entry.
const maxLegend = 16

// A Series is a point's series.csv: a time column and diagnostics.
//
// What Gather expects of series.csv: a header row whose cells are
// "name [unit]" (the unit part optional), then one row of numbers per
// output time; lines starting with '#' are skipped and cells that are not
// numbers read as NaN. The time column is the first whose name is "time"
// or "t" or starts with "time" (case-insensitive). Mix-norm columns are
// those whose name, lower-cased with everything but letters and digits
// removed, contains "mixnorm" ("mix_norm", "mix-norm H^-1", "MixNorm").
type Series struct {
	// Names and Units of the columns, as in the header.
	Names, Units []string
	// Cols[j] holds column j.
	Cols [][]float64
	// Time is the index of the time column, -1 when there is none.
	Time int
	// MixNorms are the indices of the mix-norm columns.
	MixNorms []int
}

var headerCell = regexp.MustCompile(`^\s*(.*?)\s*(?:\[(.*)\])?\s*$`)

// ReadSeries reads a series CSV file (see [Series] for the expected form).
func ReadSeries(path string) (*Series, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	r := csv.NewReader(f)
	r.Comment = '#'
	r.FieldsPerRecord = -1
	head, err := r.Read()
	if err != nil {
		return nil, fmt.Errorf("%s: no header row: %w", path, err)
	}
	s := &Series{Time: -1, Cols: make([][]float64, len(head))}
	for j, h := range head {
		m := headerCell.FindStringSubmatch(h)
		name, unit := strings.TrimSpace(h), ""
		if m != nil {
			name, unit = m[1], strings.TrimSpace(m[2])
		}
		s.Names = append(s.Names, name)
		s.Units = append(s.Units, unit)
		low := strings.ToLower(name)
		if s.Time < 0 && (low == "time" || low == "t" || strings.HasPrefix(low, "time")) {
			s.Time = j
		}
		if strings.Contains(alnum(low), "mixnorm") {
			s.MixNorms = append(s.MixNorms, j)
		}
	}
	for {
		rec, err := r.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, fmt.Errorf("%s: %w", path, err)
		}
		for j := range s.Cols {
			v := math.NaN()
			if j < len(rec) {
				if x, err := strconv.ParseFloat(strings.TrimSpace(rec[j]), 64); err == nil {
					v = x
				}
			}
			s.Cols[j] = append(s.Cols[j], v)
		}
	}
	return s, nil
}

func alnum(s string) string {
	var b strings.Builder
	for _, r := range s {
		if r >= 'a' && r <= 'z' || r >= '0' && r <= '9' {
			b.WriteRune(r)
		}
	}
	return b.String()
}

var unsafeName = regexp.MustCompile(`[^A-Za-z0-9._-]+`)

func fileName(parts ...string) string {
	return unsafeName.ReplaceAllString(strings.Join(parts, "-"), "_") + ".png"
}

// drawFigures writes the comparison figures into dir and returns their paths.
func drawFigures(sc *Scan, t *Table, conv Converter, dir string) ([]string, error) {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, err
	}
	var files []string
	var errs []error
	save := func(p *plot.Plot, name string) {
		if len(files) >= maxFigures {
			return
		}
		path := filepath.Join(dir, name)
		if err := p.Save(16*vg.Centimeter, 11*vg.Centimeter, path); err != nil {
			errs = append(errs, fmt.Errorf("figure %s: %w", name, err))
			return
		}
		files = append(files, path)
	}
	for _, fig := range mixNormFigures(sc, t) {
		save(fig.p, fig.name)
	}
	for _, fig := range summaryFigures(t, conv) {
		save(fig.p, fig.name)
	}
	return files, errors.Join(errs...)
}

type figure struct {
	name string
	p    *plot.Plot
}

// mixNormFigures overlays the mix-norm curves of the finished points, one
// figure per mix-norm column name.
func mixNormFigures(sc *Scan, t *Table) []figure {
	type curve struct {
		label string
		xy    plotter.XYs
	}
	byName := map[string][]curve{}
	units := map[string][2]string{}
	var order []string
	var finished []Row
	for _, r := range t.Rows {
		if r.State == Finished {
			finished = append(finished, r)
		}
	}
	vary := varying(finished)
	for _, r := range finished {
		s, err := ReadSeries(filepath.Join(sc.OutDir(r.ID), seriesFile))
		if err != nil || s.Time < 0 {
			continue
		}
		for _, j := range s.MixNorms {
			name := s.Names[j]
			var xy plotter.XYs
			for i, y := range s.Cols[j] {
				x := s.Cols[s.Time][i]
				if !math.IsNaN(x) && !math.IsNaN(y) && !math.IsInf(y, 0) {
					xy = append(xy, plotter.XY{X: x, Y: y})
				}
			}
			if len(xy) == 0 {
				continue
			}
			if _, ok := byName[name]; !ok {
				order = append(order, name)
				units[name] = [2]string{s.Units[s.Time], s.Units[j]}
			}
			byName[name] = append(byName[name], curve{label(r.Params, vary), xy})
		}
	}
	var figs []figure
	for _, name := range order {
		cs := byName[name]
		p := plot.New()
		p.Title.Text = name + " of each point (model predictions)"
		p.X.Label.Text = withUnit("time", units[name][0])
		p.Y.Label.Text = withUnit(name, units[name][1])
		// Logarithmic when all values are positive and span a decade.
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, c := range cs {
			for _, q := range c.xy {
				lo, hi = math.Min(lo, q.Y), math.Max(hi, q.Y)
			}
		}
		if lo > 0 && hi >= 10*lo {
			p.Y.Scale = plot.LogScale{}
			p.Y.Tick.Marker = plot.LogTicks{Prec: -1}
		}
		for i, c := range cs {
			l, err := plotter.NewLine(c.xy)
			if err != nil {
				continue
			}
			l.Color = plotutil.Color(i)
			l.Dashes = plotutil.Dashes(i / len(plotutil.DefaultColors))
			l.Width = vg.Points(1.2)
			p.Add(l)
			if len(cs) <= maxLegend {
				p.Legend.Add(c.label, l)
			}
		}
		p.Legend.Top = true
		p.Legend.TextStyle.Font.Size = vg.Points(7)
		figs = append(figs, figure{fileName(name), p})
	}
	return figs
}

func withUnit(name, unit string) string {
	if unit == "" {
		return name
	}
	return name + " [" + unit + "]"
}

// axisPositions puts an axis on a numeric scale: numbers as they are,
// quantities converted to the unit of the axis (or of its first value).
// ok is false when a value is neither: the axis is then categorical.
func axisPositions(a AxisInfo, rows []Row, conv Converter) (xs []float64, unit string, ok bool) {
	unit = a.Unit
	for i, r := range rows {
		v, _ := (&Point{Params: r.Params}).Param(a.Key)
		switch v := v.(type) {
		case float64:
			xs = append(xs, v)
		case string:
			if i == 0 && unit == "" {
				_, u, err := splitQuantity(v)
				if err != nil {
					return nil, "", false
				}
				unit = u
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

// summaryFigures draws each summary number against each axis that takes
// at least two values. Points that differ in the other axes form separate
// series; replicates (seeds) are drawn as separate markers with a line
// through their mean.
func summaryFigures(t *Table, conv Converter) []figure {
	var rows []Row
	for _, r := range t.Rows {
		if r.State == Finished {
			rows = append(rows, r)
		}
	}
	if len(rows) == 0 {
		return nil
	}
	vary := varying(rows)
	var figs []figure
	for _, a := range t.Axes {
		if a.Seed {
			continue
		}
		xs, unit, numeric := axisPositions(a, rows, conv)
		var cats []string
		if !numeric {
			seen := map[string]int{}
			xs = make([]float64, len(rows))
			for i, r := range rows {
				v, _ := (&Point{Params: r.Params}).Param(a.Key)
				s := Param{Value: v}.Text()
				if _, ok := seen[s]; !ok {
					seen[s] = len(cats)
					cats = append(cats, s)
				}
				xs[i] = float64(seen[s])
			}
		}
		distinct := map[float64]bool{}
		for _, x := range xs {
			distinct[x] = true
		}
		if len(distinct) < 2 {
			continue
		}
		logX := numeric && a.Log
		if numeric && !logX {
			lo, hi := math.Inf(1), math.Inf(-1)
			for _, x := range xs {
				lo, hi = math.Min(lo, x), math.Max(hi, x)
			}
			logX = lo > 0 && hi/lo >= 100
		}
		// Group by the other (non-seed) axes.
		others := map[string]bool{}
		for _, b := range t.Axes {
			if b.Key != a.Key && !b.Seed && vary[b.Key] {
				others[b.Key] = true
			}
		}
		groupOf := make([]string, len(rows))
		var groups []string
		gi := map[string]bool{}
		for i, r := range rows {
			g := label(r.Params, others)
			groupOf[i] = g
			if !gi[g] {
				gi[g] = true
				groups = append(groups, g)
			}
		}
		for _, k := range t.ResultKeys {
			if constant(rows, k) {
				continue
			}
			p := plot.New()
			p.Title.Text = k + " against " + shortKey(a.Key) + " (model predictions)"
			p.X.Label.Text = withUnit(a.Key, unit)
			p.Y.Label.Text = k
			if logX {
				p.X.Scale = plot.LogScale{}
				p.X.Tick.Marker = plot.LogTicks{Prec: -1}
			}
			drawn := false
			for g, name := range groups {
				var pts plotter.XYs
				sums := map[float64][2]float64{}
				for i, r := range rows {
					y, ok := r.Results[k]
					if groupOf[i] != name || !ok {
						continue
					}
					pts = append(pts, plotter.XY{X: xs[i], Y: y})
					s := sums[xs[i]]
					sums[xs[i]] = [2]float64{s[0] + y, s[1] + 1}
				}
				if len(pts) == 0 {
					continue
				}
				drawn = true
				var mean plotter.XYs
				for x, s := range sums {
					mean = append(mean, plotter.XY{X: x, Y: s[0] / s[1]})
				}
				sort.Slice(mean, func(i, j int) bool { return mean[i].X < mean[j].X })
				sc, err := plotter.NewScatter(pts)
				if err != nil {
					continue
				}
				sc.Color = plotutil.Color(g)
				sc.Shape = plotutil.Shape(g)
				p.Add(sc)
				if len(mean) > 1 {
					if l, err := plotter.NewLine(mean); err == nil {
						l.Color = plotutil.Color(g)
						p.Add(l)
					}
				}
				if name != "" && len(groups) <= maxLegend {
					p.Legend.Add(name, sc)
				}
			}
			if !drawn {
				continue
			}
			if cats != nil {
				p.NominalX(cats...)
				p.X.Label.Text = a.Key
			}
			p.Legend.Top = true
			p.Legend.TextStyle.Font.Size = vg.Points(7)
			figs = append(figs, figure{fileName(k, "vs", a.Key), p})
		}
	}
	return figs
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

// label is "k=v, k=v" over the given keys, in parameter order.
func label(params []Param, keys map[string]bool) string {
	var parts []string
	for _, p := range params {
		if keys[p.Key] {
			parts = append(parts, shortKey(p.Key)+"="+p.Text())
		}
	}
	return strings.Join(parts, ", ")
}
