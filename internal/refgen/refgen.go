// Package refgen runs the committed reference-value generators: Python
// scripts that compute test references with the Debian SciPy and NumPy
// (installed by scripts/setup.sh), kept beside the tables they write. The
// tests that check a committed table against a fresh run of its generator
// share this one runner.
package refgen

import (
	"bytes"
	"os/exec"
	"testing"
)

// Python is the interpreter of the generators: Debian's, whose SciPy and
// NumPy are the packaged ones (a python3 earlier on PATH may lack them).
const Python = "/usr/bin/python3"

// Run runs the generator script with args and returns its standard output.
// It skips t under -short (generators take seconds) and when Python cannot
// import SciPy and NumPy, and fails t if the script fails, with its
// standard error.
func Run(t testing.TB, script string, args ...string) []byte {
	t.Helper()
	if testing.Short() {
		t.Skipf("-short: %s is not re-run", script)
	}
	if err := exec.Command(Python, "-c", "import scipy, numpy").Run(); err != nil {
		t.Skipf("%s with SciPy and NumPy not available (%v): %s is not re-run", Python, err, script)
	}
	var out, errb bytes.Buffer
	cmd := exec.Command(Python, append([]string{script}, args...)...)
	cmd.Stdout, cmd.Stderr = &out, &errb
	if err := cmd.Run(); err != nil {
		t.Fatalf("%s %s: %v\n%s", Python, script, err, errb.String())
	}
	return out.Bytes()
}
