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
	// figures (nil means [LocalConverter]).
	Converter Converter
	// OutDir receives the table and figures (default scanDir/gather).
	OutDir string
	// NoFigures writes only the table.
	NoFigures bool
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
	// objects flattened with dots, e.g. "mix_norm.final"); empty when the
	// point has no summary.
	Results map[string]float64
	// Error is the recorded failure, if any.
	Error string
}

// A Table is the gathered results of a scan.
type Table struct {
	Axes []AxisInfo
	// ResultKeys is the sorted union of the Results keys of all rows.
	ResultKeys []string
	Rows       []Row
}

// Gather collects every point's parameters, state and summary numbers into
// one table, written as results.csv and results.json in opt.OutDir, and
// (unless opt.NoFigures) draws comparison figures there under figures/:
// the mix-norm curves of all finished points overlaid (one figure per
// mix-norm column of series.csv, see [ReadSeries]) and each summary number
// against each axis. It returns the table and the files written.
//
// The CSV has the columns index, id, status, one per axis (values as
// written), one per result key, and error. The JSON is an object with
// "axes", "result_keys" and "points" (each with index, id, status, params,
// results and error). Results are model predictions of memix, not
// measurements.
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
	for k := range keys {
		t.ResultKeys = append(t.ResultKeys, k)
	}
	sort.Strings(t.ResultKeys)

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
			conv = LocalConverter
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
		p := point{Index: r.Index, ID: r.ID, Status: r.State, Params: map[string]any{}, Results: r.Results, Error: r.Error}
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
