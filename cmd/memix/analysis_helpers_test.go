package main

import (
	"encoding/csv"
	"encoding/json"
	"math"
	"strings"
	"testing"

	"github.com/memix-sim/memix/config"
	"github.com/memix-sim/memix/flow"
	"github.com/memix-sim/memix/spectral"
)

// Helpers for the tests of the analysis commands.

// memixJSON runs a command with --json, requires exit 0 and returns the
// parsed document.
func memixJSON(t *testing.T, args ...string) map[string]any {
	t.Helper()
	out, errs, code := memix(t, append(args, "--json")...)
	if code != 0 {
		t.Fatalf("memix %q: exit %d\n%s", args, code, errs)
	}
	var doc map[string]any
	if err := json.Unmarshal([]byte(out), &doc); err != nil {
		t.Fatalf("memix %q --json: %v\n%s", args, err, out)
	}
	return doc
}

// rows returns the rows of table key of a JSON document.
func rows(t *testing.T, doc map[string]any, key string) []map[string]any {
	t.Helper()
	tab, ok := doc[key].(map[string]any)
	if !ok {
		t.Fatalf("no table %q in %v", key, keys(doc))
	}
	var out []map[string]any
	for _, r := range tab["rows"].([]any) {
		out = append(out, r.(map[string]any))
	}
	return out
}

func keys(m map[string]any) []string {
	var ks []string
	for k := range m {
		ks = append(ks, k)
	}
	return ks
}

// row returns the row of table key whose column col equals name.
func row(t *testing.T, doc map[string]any, key, col, name string) map[string]any {
	t.Helper()
	for _, r := range rows(t, doc, key) {
		if r[col] == name {
			return r
		}
	}
	t.Fatalf("table %s has no row with %s = %q", key, col, name)
	return nil
}

// num returns a JSON number, failing on null or another type.
func num(t *testing.T, v any) float64 {
	t.Helper()
	x, ok := v.(float64)
	if !ok {
		t.Fatalf("%v (%T) is not a number", v, v)
	}
	return x
}

// relErr is |got − want|/|want|.
func relErr(got, want float64) float64 { return math.Abs(got-want) / math.Abs(want) }

// checkRel fails unless got is want to relative tolerance tol, and logs
// the error measured.
func checkRel(t *testing.T, what string, got, want, tol float64) {
	t.Helper()
	e := relErr(got, want)
	t.Logf("%s: %.10g, want %.10g, relative error %.2g (tolerance %.0g)", what, got, want, e, tol)
	if !(e <= tol) {
		t.Errorf("%s = %.15g, want %.15g: relative error %.3g > %.0g", what, got, want, e, tol)
	}
}

// csvBlock returns the records of block name of a multi-block CSV
// document (see package report), header first.
func csvBlock(t *testing.T, out, name string) [][]string {
	t.Helper()
	for _, b := range strings.Split(out, "\n\n") {
		if rest, ok := strings.CutPrefix(b, "# "+name+"\n"); ok {
			recs, err := csv.NewReader(strings.NewReader(rest)).ReadAll()
			if err != nil {
				t.Fatalf("CSV block %s: %v\n%s", name, err, rest)
			}
			return recs
		}
	}
	t.Fatalf("no CSV block %q in\n%s", name, out)
	return nil
}

// wantBad runs a command that must fail with exit 2 and a message on
// stderr naming every one of want.
func wantBad(t *testing.T, args []string, want ...string) {
	t.Helper()
	_, errs, code := memix(t, args...)
	if code != 2 {
		t.Errorf("memix %q: exit %d, want 2\n%s", args, code, errs)
		return
	}
	for _, w := range want {
		if !strings.Contains(errs, w) {
			t.Errorf("memix %q: stderr lacks %q:\n%s", args, w, errs)
		}
	}
}

// mustGridMembrane returns the grid (in metres) and the membrane (SI) of c.
func mustGridMembrane(t *testing.T, c config.Config) (*spectral.Grid, flow.Membrane) {
	t.Helper()
	nx, ny := c.Grid.Size()
	lx, ly := c.Grid.Lengths()
	g, err := spectral.NewGrid(nx, ny, float64(lx), float64(ly))
	if err != nil {
		t.Fatal(err)
	}
	return g, c.FlowMembrane()
}

func mustSolver(t *testing.T, g *spectral.Grid, m flow.Membrane) *flow.Solver {
	t.Helper()
	s, err := flow.NewSolver(g, m)
	if err != nil {
		t.Fatal(err)
	}
	return s
}

// mustPlan returns an FFT plan for g, closed when the test ends.
func mustPlan(t *testing.T, g *spectral.Grid) spectral.Plan {
	t.Helper()
	p, err := spectral.NewPlan(g, spectral.Options{Threads: 1})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(p.Close)
	return p
}
