// Package fakememix is a stand-in for "memix run" used by the scan tests
// until the real command exists. It honours the run contract that the scan
// package relies on, and nothing of the physics:
//
//	run CONFIG -o OUTDIR [--quiet] [--threads N] [--force]
//	run --resume OUTDIR [--quiet] [--threads N]
//
// It writes OUTDIR/config.resolved.yaml, then takes fake.steps steps of
// fake.step_ms milliseconds each, writing series.csv ("time [s]",
// "mix_norm [1]" = exp(−fake.rate·t), "variance [1]") and, at the end,
// summary.json with status "finished", wall_time_s, steps, threads and a
// nested mix_norm object. On SIGTERM or SIGINT it finishes the step, writes
// checkpoint.h5 (a text file "step=K", not HDF5) and a summary with status
// "interrupted", and exits with 3; --resume continues from the checkpoint.
// fake.fail makes it fail (exit 1, message on stderr, summary "failed"),
// fake.fail_once does so only while the named file does not exist (it
// creates it), and fake.crash exits 2 without a summary. An existing
// OUTDIR without --resume or --force is refused. Every invocation is
// appended to OUTDIR/../fake-invocations.log for the tests to count.
package fakememix

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"os/signal"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"time"

	"go.yaml.in/yaml/v3"
)

// Main runs the fake with the arguments after the program name and
// returns the exit status.
func Main(args []string, stdout, stderr io.Writer) int {
	sig := make(chan os.Signal, 1)
	signal.Notify(sig, syscall.SIGTERM, syscall.SIGINT)
	defer signal.Stop(sig)
	code, err := run(args, stdout, sig)
	if err != nil {
		fmt.Fprintln(stderr, "fakememix:", err)
	}
	return code
}

type params struct {
	steps    int
	stepMS   int
	rate     float64
	fail     string
	failOnce string
	crash    bool
}

func run(args []string, stdout io.Writer, sig <-chan os.Signal) (int, error) {
	if len(args) == 0 || args[0] != "run" {
		return 1, errors.New("usage: run CONFIG -o OUTDIR | run --resume OUTDIR")
	}
	var config, out string
	resume, force := false, false
	threads := 0
	for i := 1; i < len(args); i++ {
		switch a := args[i]; a {
		case "-o":
			i++
			if i < len(args) {
				out = args[i]
			}
		case "--resume":
			resume = true
			i++
			if i < len(args) {
				out = args[i]
			}
		case "--threads":
			i++
			if i < len(args) {
				threads, _ = strconv.Atoi(args[i])
			}
		case "--quiet":
		case "--force":
			force = true
		default:
			if strings.HasPrefix(a, "-") || config != "" {
				return 1, fmt.Errorf("unexpected argument %q", a)
			}
			config = a
		}
	}
	if out == "" || (!resume && config == "") {
		return 1, errors.New("need CONFIG -o OUTDIR, or --resume OUTDIR")
	}
	logInvocation(out, args)
	start := 0
	if resume {
		config = filepath.Join(out, "config.resolved.yaml")
		b, err := os.ReadFile(filepath.Join(out, "checkpoint.h5"))
		if err != nil {
			return 1, fmt.Errorf("cannot resume: %w", err)
		}
		start, err = strconv.Atoi(strings.TrimSpace(strings.TrimPrefix(string(b), "step=")))
		if err != nil {
			return 1, fmt.Errorf("cannot resume: bad checkpoint %q", b)
		}
	} else {
		if _, err := os.Stat(out); err == nil && !force {
			return 1, fmt.Errorf("output folder %s exists; use --resume or --force", out)
		}
		if err := os.MkdirAll(out, 0o755); err != nil {
			return 1, err
		}
	}
	text, err := os.ReadFile(config)
	if err != nil {
		return 1, err
	}
	p, err := readParams(text)
	if err != nil {
		return 1, err
	}
	if !resume {
		if err := os.WriteFile(filepath.Join(out, "config.resolved.yaml"), text, 0o644); err != nil {
			return 1, err
		}
	}
	t0 := time.Now()
	summary := map[string]any{"steps": start, "threads": threads, "resumed_from": start}
	writeSummary := func(status string) {
		summary["status"] = status
		summary["wall_time_s"] = time.Since(t0).Seconds()
		b, _ := json.MarshalIndent(summary, "", "  ")
		_ = os.WriteFile(filepath.Join(out, "summary.json"), b, 0o644)
	}
	if p.crash {
		return 2, errors.New("crashed (fake.crash)")
	}
	failing := p.fail
	if p.failOnce != "" {
		if _, err := os.Stat(p.failOnce); err != nil {
			_ = os.WriteFile(p.failOnce, []byte("failed once\n"), 0o644)
			failing = "failing once (fake.fail_once)"
		}
	}
	if failing != "" {
		summary["error"] = failing
		writeSummary("failed")
		return 1, errors.New(failing)
	}
	const dt = 0.1 // seconds of model time per step
	for k := start; k < p.steps; k++ {
		time.Sleep(time.Duration(p.stepMS) * time.Millisecond)
		summary["steps"] = k + 1
		if err := writeSeries(out, k+1, dt, p.rate); err != nil {
			return 1, err
		}
		select {
		case <-sig:
			if err := os.WriteFile(filepath.Join(out, "checkpoint.h5"), []byte(fmt.Sprintf("step=%d\n", k+1)), 0o644); err != nil {
				return 1, err
			}
			writeSummary("interrupted")
			fmt.Fprintf(stdout, "interrupted at step %d\n", k+1)
			return 3, nil
		default:
		}
	}
	final := math.Exp(-p.rate * dt * float64(p.steps))
	summary["mix_norm"] = map[string]any{"final": final, "fit_rate_per_s": p.rate}
	summary["domain_length_m"] = 1e-6 / (1 + p.rate)
	writeSummary("finished")
	fmt.Fprintf(stdout, "finished %d steps\n", p.steps)
	return 0, nil
}

func readParams(text []byte) (params, error) {
	p := params{steps: 4, stepMS: 5, rate: 1}
	var cfg struct {
		Fake map[string]any `yaml:"fake"`
	}
	if err := yaml.Unmarshal(text, &cfg); err != nil {
		return p, err
	}
	num := func(k string) (float64, bool) {
		switch v := cfg.Fake[k].(type) {
		case int:
			return float64(v), true
		case float64:
			return v, true
		}
		return 0, false
	}
	if v, ok := num("steps"); ok {
		p.steps = int(v)
	}
	if v, ok := num("step_ms"); ok {
		p.stepMS = int(v)
	}
	if v, ok := num("rate"); ok {
		p.rate = v
	}
	p.fail, _ = cfg.Fake["fail"].(string)
	p.failOnce, _ = cfg.Fake["fail_once"].(string)
	p.crash, _ = cfg.Fake["crash"].(bool)
	return p, nil
}

func writeSeries(out string, n int, dt, rate float64) error {
	var b strings.Builder
	b.WriteString("step,time [s],mix_norm [1],variance [1]\n")
	for k := 0; k <= n; k++ {
		t := float64(k) * dt
		m := math.Exp(-rate * t)
		fmt.Fprintf(&b, "%d,%g,%g,%g\n", k, t, m, m*m)
	}
	tmp := filepath.Join(out, ".series.tmp")
	if err := os.WriteFile(tmp, []byte(b.String()), 0o644); err != nil {
		return err
	}
	return os.Rename(tmp, filepath.Join(out, "series.csv"))
}

func logInvocation(out string, args []string) {
	f, err := os.OpenFile(filepath.Join(filepath.Dir(filepath.Clean(out)), "fake-invocations.log"), os.O_WRONLY|os.O_CREATE|os.O_APPEND, 0o644)
	if err != nil {
		return
	}
	defer f.Close()
	fmt.Fprintln(f, strings.Join(args, " "))
}
