package scan

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/memix-sim/memix/scan/internal/fakememix"
)

// fakeEnv makes the test binary act as the fake memix (see TestMain).
const fakeEnv = "MEMIX_SCAN_FAKE_MEMIX"

// TestMain lets the test binary stand in for "memix run": started with
// fakeEnv=1 it runs fakememix.Main instead of the tests. The tests point
// their Runner at this binary, so the real memix drops in by changing
// the Runner only.
func TestMain(m *testing.M) {
	if os.Getenv(fakeEnv) == "1" {
		os.Exit(fakememix.Main(os.Args[1:], os.Stdout, os.Stderr))
	}
	os.Exit(m.Run())
}

// fakeRunner runs this test binary as the fake memix.
func fakeRunner(t testing.TB) Runner {
	t.Helper()
	exe, err := os.Executable()
	if err != nil {
		t.Fatal(err)
	}
	return Runner{Command: []string{exe}, Env: []string{fakeEnv + "=1"}}
}

// writeSweep writes a sweep file and a base config into a new folder and
// loads the sweep.
func writeSweep(t testing.TB, sweep, base string) *Sweep {
	t.Helper()
	dir := t.TempDir()
	if base != "" {
		if err := os.WriteFile(filepath.Join(dir, "base.yaml"), []byte(base), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	path := filepath.Join(dir, "sweep.yaml")
	if err := os.WriteFile(path, []byte(sweep), 0o644); err != nil {
		t.Fatal(err)
	}
	s, err := LoadSweep(path, nil)
	if err != nil {
		t.Fatalf("LoadSweep: %v", err)
	}
	return s
}

// invocations returns the lines of a point's fake-invocations.log.
func invocations(t testing.TB, sc *Scan, id string) []string {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(sc.PointDir(id), "fake-invocations.log"))
	if os.IsNotExist(err) {
		return nil
	}
	if err != nil {
		t.Fatal(err)
	}
	return strings.Split(strings.TrimSpace(string(b)), "\n")
}

func readFile(t testing.TB, path string) string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}
