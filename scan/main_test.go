package scan

import (
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"github.com/memix-sim/memix/scan/internal/fakememix"
)

// fakeEnv makes the test binary act as the fake memix (see TestMain).
const fakeEnv = "MEMIX_SCAN_FAKE_MEMIX"

// memixBin is the real memix, built by TestMain for the tests that run real
// points; memixBuildErr says why it is missing. Written once, before any
// test runs.
var (
	memixBin      string
	memixBuildErr error
)

// TestMain builds the real memix once, with go build, for the tests that
// run real points, and lets the test binary stand in for "memix run" in the
// tests that need failures and crashes on demand: started with fakeEnv=1 it
// runs fakememix.Main instead of the tests.
func TestMain(m *testing.M) {
	if os.Getenv(fakeEnv) == "1" {
		os.Exit(fakememix.Main(os.Args[1:], os.Stdout, os.Stderr))
	}
	dir, err := os.MkdirTemp("", "memix-scan-test-")
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
	memixBin, memixBuildErr = buildMemix(dir)
	code := m.Run()
	os.RemoveAll(dir)
	os.Exit(code)
}

// buildMemix builds cmd/memix into dir. The folder is world-readable, so
// that the Slurm test's tasks can run the program.
func buildMemix(dir string) (string, error) {
	if err := os.Chmod(dir, 0o755); err != nil {
		return "", err
	}
	goTool, err := exec.LookPath("go")
	if err != nil {
		goTool = filepath.Join(runtime.GOROOT(), "bin", "go")
	}
	bin := filepath.Join(dir, "memix")
	cmd := exec.Command(goTool, "build", "-o", bin, "github.com/memix-sim/memix/cmd/memix")
	if out, err := cmd.CombinedOutput(); err != nil {
		return "", fmt.Errorf("go build memix: %v\n%s", err, out)
	}
	return bin, nil
}

// realRunner runs the memix that TestMain built.
func realRunner(t testing.TB) Runner {
	t.Helper()
	if memixBuildErr != nil {
		t.Fatal(memixBuildErr)
	}
	return Runner{Command: []string{memixBin}}
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

// attempts returns the memix command lines that the scan recorded in a
// point's stdout.log, one per run of the point (local or Slurm).
func attempts(t testing.TB, sc *Scan, id string) []string {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(sc.PointDir(id), stdoutLog))
	if os.IsNotExist(err) {
		return nil
	}
	if err != nil {
		t.Fatal(err)
	}
	var out []string
	for _, l := range strings.Split(string(b), "\n") {
		if strings.HasPrefix(l, "# memix scan: ") {
			out = append(out, l)
		}
	}
	return out
}

func readFile(t testing.TB, path string) string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}
