package scan

import (
	"bufio"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
)

// A State is what a point's folder (and the scheduler) say about it.
type State string

// The states of a point, in the order [Status] decides them: a finished
// summary wins over everything, then a live run, a queued Slurm task, a
// recorded failure, a checkpoint to resume from, and otherwise pending.
const (
	Finished    State = "finished"    // out/summary.json says "finished"
	Running     State = "running"     // a live run holds the point (local process or Slurm task)
	Queued      State = "queued"      // a pending task of a Slurm job of this scan
	Failed      State = "failed"      // the last attempt failed (failure.txt)
	Interrupted State = "interrupted" // stopped with a checkpoint; the next run resumes it
	Pending     State = "pending"     // never run, or a fresh start is needed
)

// States returns the states in report order.
func States() []State {
	return []State{Finished, Running, Queued, Failed, Interrupted, Pending}
}

// summaryStatus reads out/summary.json: its status and error fields and
// the whole decoded object. A missing file gives status "".
func summaryStatus(outDir string) (status, errText string, all map[string]any, err error) {
	b, err := os.ReadFile(filepath.Join(outDir, summaryFile))
	if errors.Is(err, os.ErrNotExist) {
		return "", "", nil, nil
	}
	if err != nil {
		return "", "", nil, err
	}
	if err := json.Unmarshal(b, &all); err != nil {
		return "", "", nil, fmt.Errorf("%s: %w", filepath.Join(outDir, summaryFile), err)
	}
	status, _ = all["status"].(string)
	errText, _ = all["error"].(string)
	return status, errText, all, nil
}

// diskState is what a point's folder holds.
type diskState struct {
	status     string // summary.json status, "" when absent or unreadable
	summaryErr string // summary.json error field
	badSummary error  // summary.json exists but cannot be read
	outExists  bool
	checkpoint bool
	failure    string // failure.txt, "" when absent
	running    *marker
}

func inspect(pointDir string) diskState {
	out := filepath.Join(pointDir, pointOut)
	var d diskState
	d.status, d.summaryErr, _, d.badSummary = summaryStatus(out)
	if _, err := os.Stat(out); err == nil {
		d.outExists = true
	}
	if _, err := os.Stat(filepath.Join(out, checkpointH5)); err == nil {
		d.checkpoint = true
	}
	if b, err := os.ReadFile(filepath.Join(pointDir, failureFile)); err == nil {
		d.failure = strings.TrimSpace(string(b))
		if d.failure == "" {
			d.failure = "failed (no detail recorded)"
		}
	}
	d.running = readMarker(filepath.Join(pointDir, runningFile))
	return d
}

// action is what a runner does with a point.
type action int

const (
	actSkip   action = iota // finished: nothing to do
	actResume               // memix run --resume out
	actFresh                // memix run config.yaml -o out (an old out is moved aside first)
)

// next decides the action. A checkpoint is resumed unless the run that
// wrote it failed (a failed run restarts from scratch; its folder is kept
// as out.attempt-N). The Slurm array script makes the same decision in
// shell (see slurm.go); the tests run both on the same folders.
func (d diskState) next() action {
	switch {
	case d.status == "finished":
		return actSkip
	case d.checkpoint && d.status != "failed":
		return actResume
	}
	return actFresh
}

// moveAside renames out to the first free out.attempt-N, keeping it.
func moveAside(pointDir string) (string, error) {
	out := filepath.Join(pointDir, pointOut)
	for k := 1; ; k++ {
		dst := filepath.Join(pointDir, attemptPrefix+strconv.Itoa(k))
		if _, err := os.Lstat(dst); err == nil {
			continue
		}
		if err := os.Rename(out, dst); err != nil {
			return "", err
		}
		return dst, nil
	}
}

// A marker is the content of a point's "running" file: who runs it.
type marker struct {
	Kind string // "local" or "slurm"
	Host string
	PID  int
	Job  string // Slurm ARRAYJOB_TASK
}

func readMarker(path string) *marker {
	f, err := os.Open(path)
	if err != nil {
		return nil
	}
	defer f.Close()
	m := &marker{}
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		k, v, ok := strings.Cut(sc.Text(), "=")
		if !ok {
			continue
		}
		switch k {
		case "kind":
			m.Kind = v
		case "host":
			m.Host = v
		case "pid":
			m.PID, _ = strconv.Atoi(v)
		case "job":
			m.Job = v
		}
	}
	return m
}

// alive reports whether a local marker's process still exists on this host.
func (m *marker) alive() bool {
	return m.localState() == liveYes
}

type liveness int

const (
	liveUnknown liveness = iota // not a local run of this host
	liveYes
	liveNo
)

// localState checks a local marker's process when it ran on this host.
func (m *marker) localState() liveness {
	host, _ := os.Hostname()
	if m.Kind != "local" || m.Host != host || m.PID <= 0 {
		return liveUnknown
	}
	err := syscall.Kill(m.PID, 0)
	if err == nil || errors.Is(err, syscall.EPERM) {
		return liveYes
	}
	return liveNo
}

// tailLines returns the last n lines of s.
func tailLines(s string, n int) string {
	s = strings.TrimRight(s, "\n")
	lines := strings.Split(s, "\n")
	if len(lines) > n {
		lines = lines[len(lines)-n:]
	}
	return strings.Join(lines, "\n")
}
