package scan

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"os/exec"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
)

// StatusOptions configure [Status].
type StatusOptions struct {
	// Squeue is the squeue command (default "squeue"). When it cannot be
	// found, Status works from the point folders alone.
	Squeue string
}

// A PointStatus is the state of one point.
type PointStatus struct {
	Point
	State State
	// Detail is the first line of a failure, the Slurm task (ARRAYJOB_TASK)
	// of a queued or running point, or the host and process of a local run.
	Detail string
}

// A StatusReport is the state of every point of a scan.
type StatusReport struct {
	Points []PointStatus
	Counts map[State]int
	// Notes says what the report could not check (e.g. no squeue).
	Notes []string
}

// String is a one-line summary: "8 points: 3 finished, 1 failed, ...".
func (r *StatusReport) String() string {
	var parts []string
	for _, s := range States() {
		if r.Counts[s] > 0 {
			parts = append(parts, fmt.Sprintf("%d %s", r.Counts[s], s))
		}
	}
	return fmt.Sprintf("%d points: %s", len(r.Points), strings.Join(parts, ", "))
}

// Status reports the state of every point of the scan in scanDir, from the
// point folders (summary, checkpoint, failure record, running marker) and,
// for the Slurm jobs recorded in slurm/jobs.json, from squeue: a task that
// squeue lists as pending makes its point queued, one it lists as running
// makes it running. No accounting (sacct) is needed. Without squeue a
// Slurm running marker is trusted, and a note says so. A marker whose run
// is gone (its Slurm task has left the queue, or its local process on this
// host has exited) means the run was killed before it could record
// anything: the point is reported failed, with that as its detail.
func Status(ctx context.Context, scanDir string, opt StatusOptions) (*StatusReport, error) {
	sc, err := Open(scanDir)
	if err != nil {
		return nil, err
	}
	jobs, err := readJobs(sc.Dir)
	if err != nil {
		return nil, err
	}
	rep := &StatusReport{Counts: map[State]int{}}
	disk := make([]diskState, len(sc.Points))
	ids := map[string]bool{}
	for _, j := range jobs {
		ids[j.JobID] = true
	}
	for i, p := range sc.Points {
		disk[i] = inspect(sc.PointDir(p.ID))
		if m := disk[i].running; m != nil && m.Kind == "slurm" {
			if job, _, ok := strings.Cut(m.Job, "_"); ok {
				ids[job] = true
			}
		}
	}
	queue, haveQueue, note := squeueTasks(ctx, opt.Squeue, ids)
	if note != "" {
		rep.Notes = append(rep.Notes, note)
	}
	// Map points to the queue state of their tasks (running wins).
	type task struct {
		name  string
		state string
	}
	inQueue := map[string]task{}
	for _, j := range jobs {
		for _, t := range j.Tasks {
			st, ok := queue[j.JobID][t.Task]
			if !ok {
				continue
			}
			name := j.JobID + "_" + strconv.Itoa(t.Task)
			if old, seen := inQueue[t.ID]; !seen || (old.state != "R" && st == "R") {
				inQueue[t.ID] = task{name, st}
			}
		}
	}
	// A running marker of a task that squeue lists as running counts too
	// (a job submitted by hand from array.sh is not in jobs.json).
	for i, p := range sc.Points {
		m := disk[i].running
		if m == nil || m.Kind != "slurm" {
			continue
		}
		job, t, _ := strings.Cut(m.Job, "_")
		n, err := strconv.Atoi(t)
		if err == nil && queue[job][n] == "R" {
			inQueue[p.ID] = task{m.Job, "R"}
		}
	}
	for i, p := range sc.Points {
		d := disk[i]
		ps := PointStatus{Point: p}
		q, queued := inQueue[p.ID]
		m := d.running
		switch {
		case d.status == "finished":
			ps.State = Finished
		case queued && q.state == "R":
			ps.State, ps.Detail = Running, "Slurm task "+q.name
		case m != nil && m.Kind == "local" && m.localState() == liveYes:
			ps.State, ps.Detail = Running, fmt.Sprintf("local process %d on %s", m.PID, m.Host)
		case m != nil && m.Kind == "local" && m.localState() == liveUnknown:
			ps.State, ps.Detail = Running, fmt.Sprintf("local process %d on %s (not confirmed: another host)", m.PID, m.Host)
		case m != nil && m.Kind == "slurm" && !haveQueue:
			ps.State, ps.Detail = Running, "Slurm task "+m.Job+" (not confirmed: no squeue)"
		case queued:
			ps.State, ps.Detail = Queued, "Slurm task "+q.name+" ("+q.state+")"
		case m != nil && inspect(sc.PointDir(p.ID)).running != nil:
			// A marker whose run is gone, still there on a second look:
			// the run was killed before it could record anything.
			d = inspect(sc.PointDir(p.ID))
			if d.status == "finished" {
				ps.State = Finished
				break
			}
			if d.checkpoint && d.status == "interrupted" {
				ps.State = Interrupted
				break
			}
			who := fmt.Sprintf("the local run (process %d)", m.PID)
			if m.Kind == "slurm" {
				who = fmt.Sprintf("Slurm task %s (see %s)", m.Job, filepath.Join(slurmDir, "logs", m.Job+".err"))
			}
			ps.State, ps.Detail = Failed, who+" ended without recording a result: killed (time limit, memory, node failure)?"
		case d.failure != "":
			ps.State, ps.Detail = Failed, firstLine(d.failure)
		case d.status == "failed":
			ps.State, ps.Detail = Failed, d.summaryErr
		case d.checkpoint || d.status == "interrupted":
			ps.State = Interrupted
		default:
			ps.State = Pending
		}
		rep.Counts[ps.State]++
		rep.Points = append(rep.Points, ps)
	}
	return rep, nil
}

func firstLine(s string) string {
	l, _, _ := strings.Cut(s, "\n")
	return l
}

// squeueTasks asks squeue for the tasks of the recorded jobs still in the
// queue: job id → task → squeue state code (PD, R, CG, ...). Completing
// (CG) counts as running; every other code as queued.
func squeueTasks(ctx context.Context, squeue string, jobIDs map[string]bool) (map[string]map[int]string, bool, string) {
	if squeue == "" {
		squeue = "squeue"
	}
	if _, err := exec.LookPath(squeue); err != nil {
		if len(jobIDs) == 0 {
			return nil, false, ""
		}
		return nil, false, "squeue not found: queued tasks are shown as pending and running ones are taken from the point folders"
	}
	out := map[string]map[int]string{}
	if len(jobIDs) == 0 {
		return out, true, ""
	}
	var ids []string
	for id := range jobIDs {
		ids = append(ids, id)
	}
	sort.Strings(ids)
	cmd := exec.CommandContext(ctx, squeue, "-h", "-r", "-o", "%F|%K|%t", "-j", strings.Join(ids, ","))
	var stdout, stderr bytes.Buffer
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	if err := cmd.Run(); err != nil {
		// With a single job id that has left the queue squeue fails with
		// "Invalid job id specified": nothing is queued.
		if strings.Contains(stderr.String(), "Invalid job id") {
			return out, true, ""
		}
		var ee *exec.ExitError
		if errors.As(err, &ee) || ctx.Err() == nil {
			return nil, false, fmt.Sprintf("squeue failed (%v: %s): queued and running tasks are taken from the point folders only", err, strings.TrimSpace(stderr.String()))
		}
	}
	for _, line := range strings.Split(stdout.String(), "\n") {
		f := strings.Split(strings.TrimSpace(line), "|")
		if len(f) != 3 {
			continue
		}
		t, err := strconv.Atoi(f[1])
		if err != nil {
			continue
		}
		st := f[2]
		if st == "CG" {
			st = "R"
		}
		if out[f[0]] == nil {
			out[f[0]] = map[int]string{}
		}
		out[f[0]][t] = st
	}
	return out, true, ""
}
