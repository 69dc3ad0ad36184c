package scan

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
)

func TestReadSeries(t *testing.T) {
	path := filepath.Join(t.TempDir(), "series.csv")
	text := "# written by a test\nstep,t [s],Mix-Norm H^-1 [1], mixnorm_half [m^0.5] ,variance\n" +
		"0,0,1,2,3\n1,0.5,nan,,4\n"
	if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	s, err := ReadSeries(path)
	if err != nil {
		t.Fatal(err)
	}
	if s.Time != 1 || !reflect.DeepEqual(s.MixNorms, []int{2, 3}) {
		t.Errorf("time column %d, mix-norm columns %v; want 1 and [2 3]", s.Time, s.MixNorms)
	}
	if !reflect.DeepEqual(s.Names, []string{"step", "t", "Mix-Norm H^-1", "mixnorm_half", "variance"}) ||
		!reflect.DeepEqual(s.Units, []string{"", "s", "1", "m^0.5", ""}) {
		t.Errorf("names %q units %q", s.Names, s.Units)
	}
	if s.Cols[1][1] != 0.5 || !math.IsNaN(s.Cols[2][1]) || !math.IsNaN(s.Cols[3][1]) || s.Cols[4][1] != 4 {
		t.Errorf("second row %v %v %v %v", s.Cols[1][1], s.Cols[2][1], s.Cols[3][1], s.Cols[4][1])
	}
}

// TestGather runs a small scan with replicates and a failing point and
// checks the table, its files and the figures.
func TestGather(t *testing.T) {
	sc := expandFake(t, `
base: {fake: {steps: 5, step_ms: 1}, run: {seed: 0}}
zip:
  - fake.rate: [0.5, 1, 2]
    fake.fail: ["", "", "the composition field diverged"]
axes:
  subphase.lower.depth: {log: [50 nm, 5 um], n: 3}
replicates: {n: 2, key: run.seed}
`)
	if len(sc.Points) != 18 {
		t.Fatalf("%d points", len(sc.Points))
	}
	if _, err := RunLocal(context.Background(), sc.Dir, LocalOptions{Workers: 2, Runner: fakeRunner(t)}); err != nil {
		t.Fatal(err)
	}
	tab, files, err := Gather(context.Background(), sc.Dir, GatherOptions{Squeue: "/nonexistent/squeue"})
	if err != nil {
		t.Fatal(err)
	}
	wantKeys := []string{"domain_length_m", "mix_norm.final", "mix_norm.fit_rate_per_s", "resumed_from", "steps", "threads", "wall_time_s"}
	if !reflect.DeepEqual(tab.ResultKeys, wantKeys) {
		t.Errorf("result keys %q, want %q", tab.ResultKeys, wantKeys)
	}
	nFinished := 0
	for _, r := range tab.Rows {
		rate, _ := (&Point{Params: r.Params}).Param("fake.rate")
		if rate == 2.0 {
			if r.State != Failed || !strings.Contains(r.Error, "the composition field diverged") {
				t.Errorf("row %d: %s %q, want failed with the error", r.Index, r.State, r.Error)
			}
			continue
		}
		nFinished++
		// The row holds its own point's results: the fake's final
		// mix-norm is exp(−rate·0.1 s·steps) for its rate.
		want := math.Exp(-rate.(float64) * 0.1 * 5)
		if r.State != Finished || math.Abs(r.Results["mix_norm.final"]-want) > 1e-15 {
			t.Errorf("row %d (rate %v): %s, mix_norm.final = %v, want %v", r.Index, rate, r.State, r.Results["mix_norm.final"], want)
		}
	}
	if nFinished != 12 {
		t.Errorf("%d finished rows, want 12", nFinished)
	}

	// The CSV: a header and one row per point.
	recs, err := csv.NewReader(strings.NewReader(readFile(t, filepath.Join(sc.Dir, "gather", "results.csv")))).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	head := append(append([]string{"index", "id", "status", "fake.rate", "fake.fail", "subphase.lower.depth", "run.seed"}, wantKeys...), "error")
	if !reflect.DeepEqual(recs[0], head) || len(recs) != 19 {
		t.Errorf("CSV header %q, %d lines", recs[0], len(recs))
	}
	if got := recs[3][:7]; !reflect.DeepEqual(got, []string{"2", sc.Points[2].ID, "finished", "0.5", "", "500 nm", "1"}) {
		t.Errorf("CSV row 2: %q", got)
	}
	// The JSON.
	var doc struct {
		Axes   []AxisInfo `json:"axes"`
		Points []struct {
			ID      string             `json:"id"`
			Status  string             `json:"status"`
			Params  map[string]any     `json:"params"`
			Results map[string]float64 `json:"results"`
		} `json:"points"`
	}
	if err := json.Unmarshal([]byte(readFile(t, filepath.Join(sc.Dir, "gather", "results.json"))), &doc); err != nil {
		t.Fatal(err)
	}
	if len(doc.Points) != 18 || doc.Points[2].Params["subphase.lower.depth"] != "500 nm" || doc.Points[2].Results["steps"] != 5 {
		t.Errorf("JSON point 2: %+v", doc.Points[2])
	}
	if len(doc.Axes) != 4 || !doc.Axes[2].Log || doc.Axes[2].Unit != "nm" || !doc.Axes[3].Seed {
		t.Errorf("JSON axes %+v", doc.Axes)
	}

	// Figures: the overlaid mix-norm curves, and each result against each
	// axis but the seed; PNG files.
	var names []string
	for _, f := range files {
		names = append(names, filepath.Base(f))
		if strings.HasSuffix(f, ".png") {
			b := []byte(readFile(t, f))
			if !bytes.HasPrefix(b, []byte("\x89PNG\r\n\x1a\n")) || len(b) < 5000 {
				t.Errorf("%s: not a PNG of a drawn figure (%d bytes)", f, len(b))
			}
		}
	}
	for _, want := range []string{"results.csv", "results.json", "mix_norm.png",
		"mix_norm.final-vs-fake.rate.png", "mix_norm.final-vs-subphase.lower.depth.png", "wall_time_s-vs-fake.rate.png"} {
		found := false
		for _, n := range names {
			found = found || n == want
		}
		if !found {
			t.Errorf("no %s among %q", want, names)
		}
	}
	// No figure against the seed or against fake.fail (one value among
	// the finished points), and none of a constant result (threads).
	for _, n := range names {
		if strings.Contains(n, "run.seed") || strings.Contains(n, "fake.fail") || strings.HasPrefix(n, "threads") {
			t.Errorf("unexpected figure %s", n)
		}
	}
}
