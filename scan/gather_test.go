package scan

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"math"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
)

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
	// The headline results that the fake's summary has, in headline order;
	// its null threshold time is absent.
	wantKeys := []string{"mixing.mixnorm.ratio", "mixing.mixnorm.decay_rate_per_s", "mixing.mixnorm.final",
		"prediction.growth_rate_per_s", "wall_time_s", "steps"}
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
		if r.State != Finished || math.Abs(r.Results["mixing.mixnorm.final"]-want) > 1e-15 {
			t.Errorf("row %d (rate %v): %s, mixing.mixnorm.final = %v, want %v", r.Index, rate, r.State, r.Results["mixing.mixnorm.final"], want)
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
	if len(doc.Points) != 18 || doc.Points[2].Params["subphase.lower.depth"] != "500 nm" || doc.Points[2].Results["steps"] != 5 ||
		len(doc.Points[2].Results) != len(wantKeys) {
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
	for _, want := range []string{"results.csv", "results.json", "mixnorm.png",
		"mixing.mixnorm.ratio-vs-fake.rate.png", "mixing.mixnorm.ratio-vs-subphase.lower.depth.png",
		"prediction.growth_rate_per_s-vs-fake.rate.png", "wall_time_s-vs-fake.rate.png"} {
		found := false
		for _, n := range names {
			found = found || n == want
		}
		if !found {
			t.Errorf("no %s among %q", want, names)
		}
	}
	// No figure against the seed or against fake.fail (one value among
	// the finished points), and none of a result not marked for figures.
	for _, n := range names {
		if strings.Contains(n, "run.seed") || strings.Contains(n, "fake.fail") || strings.HasPrefix(n, "steps") {
			t.Errorf("unexpected figure %s", n)
		}
	}

	// With AllNumbers every number of the summaries is a column, the
	// headline first.
	tab, _, err = Gather(context.Background(), sc.Dir, GatherOptions{Squeue: "/nonexistent/squeue", NoFigures: true, AllNumbers: true})
	if err != nil {
		t.Fatal(err)
	}
	wantAll := append(append([]string(nil), wantKeys...), "mixing.mixnorm.initial", "resumed_from", "threads")
	if !reflect.DeepEqual(tab.ResultKeys, wantAll) {
		t.Errorf("all result keys %q, want %q", tab.ResultKeys, wantAll)
	}
}
