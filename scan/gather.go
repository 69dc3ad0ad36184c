package scan

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
)

// GatherOptions configure [Gather].
type GatherOptions struct {
	// Converter puts quantity-valued axes on a numeric scale for the
	// figures (nil means [ConfigConverter]).
	Converter Converter
	// OutDir receives the table and figures (default scanDir/gather).
	OutDir string
	// NoFigures writes only the table.
	NoFigures bool
	// AllNumbers puts every number of summary.json into the table, after
	// the headline results (see [HeadlineResults]).
	AllNumbers bool
	// Squeue is passed to [Status] (default "squeue", optional).
	Squeue string
}

// A Row is one point of the gathered table.
type Row struct {
	Index  int
	ID     string
	State  State
	Params []Param
	// Results holds every number of the point's summary.json (nested
	// objects flattened with dots, e.g. "mixing.mixnorm.final"); empty
	// when the point has no summary. Nulls (a threshold never reached)
	// are absent.
	Results map[string]float64
	// Error is the recorded failure, if any.
	Error string
}

// A Table is the gathered results of a scan.
type Table struct {
	Axes []AxisInfo
	// ResultKeys are the result columns: the headline results that some
	// row has, in the order of [HeadlineResults], and with AllNumbers
	// then every other key of the rows' Results, sorted.
	ResultKeys []string
	Rows       []Row
}

// A ResultKey names one number of summary.json (docs/outputs.md).
type ResultKey struct {
	// Key is the dotted path in summary.json, e.g.
	// "mixing.mixnorm.decay_rate_per_s"; it names the table's column.
	Key string
	// Title is a short description for people.
	Title string
	// Unit is the SI unit ("" for a pure number).
	Unit string
	// Figure is true for the results drawn against each axis.
	Figure bool
}

// HeadlineResults returns the numbers of summary.json that the gathered
// table holds by default, in column order: how far and how fast the
// lipids mixed (the multiscale mix-norm, and the H⁻¹ norm), when the norms
// fell to output.threshold of their initial value, the linear-stability
// prediction (growth rate and wavelength of the fastest mode), the domain
// length at the end, and the run's extent. All are model predictions.
func HeadlineResults() []ResultKey {
	return []ResultKey{
		{"mixing.mixnorm.ratio", "mix-norm final/initial", "", true},
		{"mixing.mixnorm.decay_rate_per_s", "mix-norm decay rate (fit)", "1/s", true},
		{"mixing.mixnorm.threshold_time_s", "mix-norm threshold time", "s", true},
		{"mixing.mixnorm.final", "mix-norm final", "", false},
		{"mixing.hminus1_norm.decay_rate_per_s", "H^-1 norm decay rate (fit)", "1/s", false},
		{"mixing.hminus1_norm.threshold_time_s", "H^-1 norm threshold time", "s", false},
		{"prediction.growth_rate_per_s", "predicted growth rate", "1/s", true},
		{"prediction.fastest_wavelength_m", "predicted fastest wavelength", "m", true},
		{"domain_length_m.Final", "final domain length", "m", true},
		{"wall_time_s", "wall time", "s", true},
		{"steps", "steps", "", false},
	}
}

// resultInfo describes a result key: its headline entry, or one made up
// from the key (its unit from the suffix: _s, _per_s, _m).
func resultInfo(k string) ResultKey {
	for _, r := range HeadlineResults() {
		if r.Key == k {
			return r
		}
	}
	return ResultKey{Key: k, Title: k, Unit: unitOfKey(k)}
}

// Columns describes the result columns (t.ResultKeys).
func (t *Table) Columns() []ResultKey {
	out := make([]ResultKey, len(t.ResultKeys))
	for i, k := range t.ResultKeys {
		out[i] = resultInfo(k)
	}
	return out
}

// figureKeys are the result columns drawn against each axis.
func (t *Table) figureKeys() []ResultKey {
	var out []ResultKey
	for _, r := range t.Columns() {
		if r.Figure {
			out = append(out, r)
		}
	}
	return out
}

// Gather collects every point's parameters, state and summary numbers into
// one table, written as results.csv and results.json in opt.OutDir, and
// (unless opt.NoFigures) draws comparison figures there under figures/
// with the outputs package's line plots:
//
//   - mixnorm.png: the mix-norm of every finished point (series.csv column
//     "mixnorm" over its first value, against "time_si" in seconds),
//     overlaid and labelled by the parameters that vary;
//   - KEY-vs-AXIS.png: each headline result marked Figure (see
//     [HeadlineResults]) against each varied axis but the seed, one curve
//     per combination of the other axes (means over replicates, single
//     values as points). A quantity axis is numeric (logarithmic for a log
//     range or a span of 100 or more), anything else categorical, its
//     values numbered 1, 2, ... in the axis label.
//
// It returns the table and the files written.
//
// The CSV has the columns index, id, status, one per axis (values as
// written; empty for null), one per result key (empty when the point has
// none), and error. The JSON is an object with "axes", "result_keys" and
// "points" (each with index, id, status, params, results and error).
// Results are model predictions of memix, not measurements.
func Gather(ctx context.Context, scanDir string, opt GatherOptions) (*Table, []string, error) {
	sc, err := Open(scanDir)
	if err != nil {
		return nil, nil, err
	}
	st, err := Status(ctx, scanDir, StatusOptions{Squeue: opt.Squeue})
	if err != nil {
		return nil, nil, err
	}
	t := &Table{Axes: sc.Axes}
	keys := map[string]bool{}
	for _, ps := range st.Points {
		r := Row{Index: ps.Index, ID: ps.ID, State: ps.State, Params: ps.Params, Results: map[string]float64{}}
		_, _, all, err := summaryStatus(sc.OutDir(ps.ID))
		if err != nil {
			r.Error = err.Error()
		}
		flatten("", all, r.Results)
		for k := range r.Results {
			keys[k] = true
		}
		if ps.State == Failed {
			d := inspect(sc.PointDir(ps.ID))
			r.Error = d.failure
			if r.Error == "" {
				r.Error = d.summaryErr
			}
		}
		t.Rows = append(t.Rows, r)
	}
	for _, r := range HeadlineResults() {
		if keys[r.Key] {
			t.ResultKeys = append(t.ResultKeys, r.Key)
			delete(keys, r.Key)
		}
	}
	if opt.AllNumbers {
		var rest []string
		for k := range keys {
			rest = append(rest, k)
		}
		sort.Strings(rest)
		t.ResultKeys = append(t.ResultKeys, rest...)
	}

	out := opt.OutDir
	if out == "" {
		out = filepath.Join(sc.Dir, gatherDir)
	}
	if err := os.MkdirAll(out, 0o755); err != nil {
		return nil, nil, err
	}
	var files []string
	csvPath := filepath.Join(out, "results.csv")
	if err := writeFileAtomic(csvPath, t.csv()); err != nil {
		return nil, nil, err
	}
	jsonPath := filepath.Join(out, "results.json")
	js, err := t.json()
	if err != nil {
		return nil, nil, err
	}
	if err := writeFileAtomic(jsonPath, js); err != nil {
		return nil, nil, err
	}
	files = append(files, csvPath, jsonPath)
	if !opt.NoFigures {
		conv := opt.Converter
		if conv == nil {
			conv = ConfigConverter
		}
		figs, err := drawFigures(sc, t, conv, filepath.Join(out, "figures"))
		files = append(files, figs...)
		if err != nil {
			return t, files, err
		}
	}
	return t, files, nil
}

// flatten copies the finite numbers of a decoded JSON object into dst,
// joining nested keys with dots. Strings, booleans and arrays are skipped.
func flatten(prefix string, v map[string]any, dst map[string]float64) {
	for k, x := range v {
		key := k
		if prefix != "" {
			key = prefix + "." + k
		}
		switch x := x.(type) {
		case float64:
			if !math.IsNaN(x) && !math.IsInf(x, 0) {
				dst[key] = x
			}
		case map[string]any:
			flatten(key, x, dst)
		}
	}
}

func (t *Table) csv() []byte {
	var buf bytes.Buffer
	w := csv.NewWriter(&buf)
	head := []string{"index", "id", "status"}
	for _, a := range t.Axes {
		head = append(head, a.Key)
	}
	head = append(head, t.ResultKeys...)
	head = append(head, "error")
	_ = w.Write(head)
	for _, r := range t.Rows {
		row := []string{strconv.Itoa(r.Index), r.ID, string(r.State)}
		for _, a := range t.Axes {
			v, _ := (&Point{Params: r.Params}).Param(a.Key)
			row = append(row, Param{Value: v}.Text())
		}
		for _, k := range t.ResultKeys {
			if v, ok := r.Results[k]; ok {
				row = append(row, strconv.FormatFloat(v, 'g', -1, 64))
			} else {
				row = append(row, "")
			}
		}
		row = append(row, r.Error)
		_ = w.Write(row)
	}
	w.Flush()
	return buf.Bytes()
}

func (t *Table) json() ([]byte, error) {
	type point struct {
		Index   int                `json:"index"`
		ID      string             `json:"id"`
		Status  State              `json:"status"`
		Params  map[string]any     `json:"params"`
		Results map[string]float64 `json:"results"`
		Error   string             `json:"error,omitempty"`
	}
	doc := struct {
		Axes       []AxisInfo `json:"axes"`
		ResultKeys []string   `json:"result_keys"`
		Points     []point    `json:"points"`
	}{Axes: t.Axes, ResultKeys: t.ResultKeys}
	if doc.ResultKeys == nil {
		doc.ResultKeys = []string{}
	}
	for _, r := range t.Rows {
		p := point{Index: r.Index, ID: r.ID, Status: r.State, Params: map[string]any{}, Results: map[string]float64{}, Error: r.Error}
		for _, k := range t.ResultKeys {
			if v, ok := r.Results[k]; ok {
				p.Results[k] = v
			}
		}
		for _, q := range r.Params {
			p.Params[q.Key] = q.Value
		}
		doc.Points = append(doc.Points, p)
	}
	b, err := json.MarshalIndent(doc, "", "  ")
	if err != nil {
		return nil, fmt.Errorf("scan: gather: %w", err)
	}
	return append(b, '\n'), nil
}
