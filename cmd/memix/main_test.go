package main

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/memix-sim/memix/config"
)

// memix runs the command line in-process and returns stdout, stderr and
// the exit code.
func memix(t *testing.T, args ...string) (stdout, stderr string, code int) {
	t.Helper()
	var out, errb bytes.Buffer
	err := run(context.Background(), args, &out, &errb)
	return out.String(), errb.String(), exitCode(err)
}

func writeFile(t *testing.T, text string) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), "c.yaml")
	if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func TestUsageErrors(t *testing.T) {
	for _, tt := range []struct {
		args []string
		want string // on stderr
	}{
		{nil, "no command given"},
		{[]string{"chek", "x.yaml"}, "Did you mean this?\n\tcheck"},
		{[]string{"check"}, "accepts 1 arg(s), received 0"},
		{[]string{"check", "a.yaml", "b.yaml"}, "accepts 1 arg(s), received 2"},
		{[]string{"check", "--nope", "a.yaml"}, "unknown flag: --nope"},
		{[]string{"check", "--json", "--csv", "../../examples/free-patch.yaml"}, "exclude each other"},
		{[]string{"version", "extra"}, "unknown command"},
	} {
		out, errs, code := memix(t, tt.args...)
		if code != 2 || !strings.Contains(errs, tt.want) || !strings.Contains(errs, "memix help") {
			t.Errorf("memix %q: exit %d, stderr %q, stdout %q; want exit 2 and %q", tt.args, code, errs, out, tt.want)
		}
	}
}

func TestHelp(t *testing.T) {
	out, _, code := memix(t, "help")
	if code != 0 || !strings.Contains(out, "check") || !strings.Contains(out, "version") {
		t.Errorf("help: exit %d\n%s", code, out)
	}
	out, _, code = memix(t, "check", "--help")
	if code != 0 || !strings.Contains(out, "--resolved") || !strings.Contains(out, "--json") {
		t.Errorf("check --help: exit %d\n%s", code, out)
	}
}

func TestVersion(t *testing.T) {
	out, _, code := memix(t, "version")
	if code != 0 || !strings.Contains(out, "memix:") || !strings.Contains(out, "dev") || !strings.Contains(out, "go1.") {
		t.Errorf("version: exit %d\n%s", code, out)
	}
	out, _, code = memix(t, "version", "--json")
	var v map[string]any
	if err := json.Unmarshal([]byte(out), &v); err != nil || code != 0 {
		t.Fatalf("version --json: %v, exit %d\n%s", err, code, out)
	}
	if v["version"] != "dev" || v["fft_default"] == "" || len(v["fft_backends"].([]any)) == 0 {
		t.Errorf("version --json: %v", v)
	}
}

// TestCheckExamples: every example checks clean and the text report
// shows the lengths, the units and the advice.
func TestCheckExamples(t *testing.T) {
	files, _ := filepath.Glob("../../examples/*.yaml")
	if len(files) < 3 {
		t.Fatalf("examples: %v", files)
	}
	for _, f := range files {
		out, errs, code := memix(t, "check", f)
		if code != 0 || errs != "" {
			t.Errorf("check %s: exit %d\n%s", f, code, errs)
		}
		for _, want := range []string{"valid:          true", "Saffman–Delbrück length", "Reduced units", "Resolution", "ok "} {
			if !strings.Contains(out, want) {
				t.Errorf("check %s: no %q in\n%s", f, want, out)
			}
		}
	}
}

// TestCheckJSON compares the JSON lengths with the library's values.
func TestCheckJSON(t *testing.T) {
	const f = "../../examples/glass-gap.yaml"
	out, _, code := memix(t, "check", "--json", f)
	var doc struct {
		Valid   bool `json:"valid"`
		Lengths struct {
			Rows []struct {
				Name    string   `json:"name"`
				Value   *float64 `json:"value"`
				Reduced *float64 `json:"reduced"`
			} `json:"rows"`
		} `json:"lengths"`
		Advice struct {
			Rows []struct{ Level, Advice string } `json:"rows"`
		} `json:"advice"`
	}
	if err := json.Unmarshal([]byte(out), &doc); err != nil || code != 0 || !doc.Valid {
		t.Fatalf("exit %d, %v\n%s", code, err, out)
	}
	c, _ := config.Load(f)
	s := c.Scales()
	want := map[string]float64{"saffman_delbruck": float64(s.SaffmanDelbruck), "wall_lower": float64(s.WallLower),
		"screening": float64(s.Screening), "spacing": float64(s.Spacing), "box": float64(s.Box)}
	for _, r := range doc.Lengths.Rows {
		w, finite := want[r.Name]
		switch {
		case finite && (r.Value == nil || *r.Value != w):
			t.Errorf("%s: %v, want %v", r.Name, r.Value, w)
		case !finite && r.Value != nil:
			t.Errorf("%s: %v, want null (no such length)", r.Name, *r.Value)
		}
	}
	if len(doc.Advice.Rows) == 0 || doc.Advice.Rows[0].Level != "ok" {
		t.Errorf("advice %v", doc.Advice.Rows)
	}
}

// TestCheckBad: a bad file exits 2 and lists every problem on stderr;
// with --json the problems are also on stdout.
func TestCheckBad(t *testing.T) {
	p := writeFile(t, "membrane:\n  viscosity: 200 nm\n  viscosty: 1\nsubphase:\n  lower: {kind: wall}\ngrid: {n: 127}\n")
	out, errs, code := memix(t, "check", p)
	if code != 2 || out != "" {
		t.Errorf("exit %d, stdout %q", code, out)
	}
	for _, want := range []string{"4 problems", "membrane.viscosity", "did you mean membrane.viscosity", "subphase.lower.depth", "grid.n"} {
		if !strings.Contains(errs, want) {
			t.Errorf("stderr lacks %q:\n%s", want, errs)
		}
	}
	out, _, code = memix(t, "check", "--json", p)
	var doc struct {
		Valid    bool `json:"valid"`
		Problems struct {
			Rows []struct{ Key, Value, Unit, Valid, Problem string } `json:"rows"`
		} `json:"problems"`
	}
	if err := json.Unmarshal([]byte(out), &doc); err != nil || code != 2 || doc.Valid || len(doc.Problems.Rows) != 4 {
		t.Fatalf("exit %d, %v, %+v\n%s", code, err, doc, out)
	}
	for _, r := range doc.Problems.Rows {
		if r.Key == "membrane.viscosity" && (r.Unit != "Pa*s*m" || r.Valid != "> 0" || r.Value != "200 nm") {
			t.Errorf("row %+v", r)
		}
	}
	_, errs, code = memix(t, "check", filepath.Join(t.TempDir(), "none.yaml"))
	if code != 2 || !strings.Contains(errs, "none.yaml") {
		t.Errorf("missing file: exit %d, %s", code, errs)
	}
}

// TestCheckResolved: --resolved prints YAML that loads to the same values.
func TestCheckResolved(t *testing.T) {
	const f = "../../examples/supported-friction.yaml"
	out, _, code := memix(t, "check", "--resolved", f)
	if code != 0 {
		t.Fatalf("exit %d", code)
	}
	back, err := config.Parse([]byte(out), "resolved")
	if err != nil {
		t.Fatal(err)
	}
	c, _ := config.Load(f)
	r := c.Resolved()
	for _, k := range config.Keys() {
		x, okx := r.Value(k.Key)
		y, oky := back.Value(k.Key)
		if x != y || okx != oky {
			t.Errorf("%s: %q (%v) after the round trip, want %q (%v)", k.Key, y, oky, x, okx)
		}
	}
}

func TestCheckEnv(t *testing.T) {
	t.Setenv("MEMIX_GRID_N", "64")
	out, _, code := memix(t, "check", "--json", "../../examples/free-patch.yaml")
	if code != 0 || !strings.Contains(out, `"grid_points": "64×64"`) {
		t.Errorf("env override: exit %d\n%s", code, out)
	}
	t.Setenv("MEMIX_GRID_N", "63")
	_, errs, code := memix(t, "check", "../../examples/free-patch.yaml")
	if code != 2 || !strings.Contains(errs, `grid.n = "63"`) {
		t.Errorf("bad env override: exit %d\n%s", code, errs)
	}
}

func TestExitCode(t *testing.T) {
	for _, tt := range []struct {
		err  error
		code int
	}{
		{nil, 0},
		{errors.New("disk full"), 1},
		{context.Canceled, 1},
		{usageError{errors.New("x")}, 2},
		{fmt.Errorf("wrapped: %w", configError{"a", &config.FieldError{Key: "k", Err: config.ErrRange}}), 2},
		{&config.FileError{Path: "a", Err: os.ErrNotExist}, 2},
	} {
		if got := exitCode(tt.err); got != tt.code {
			t.Errorf("exitCode(%v) = %d, want %d", tt.err, got, tt.code)
		}
	}
}

// TestCommands: every registered command is a real one.
func TestCommands(t *testing.T) {
	e := &env{}
	names := map[string]bool{}
	for _, mk := range commands {
		c := mk(e)
		names[c.Name()] = true
		if c.Short == "" || c.RunE == nil {
			t.Errorf("command %s lacks a description or a RunE", c.Name())
		}
	}
	for _, n := range []string{"run", "check", "stability", "mobility", "response", "mixing", "inspect", "scan", "gather", "bench", "version"} {
		if !names[n] {
			t.Errorf("no command %s", n)
		}
	}
}
