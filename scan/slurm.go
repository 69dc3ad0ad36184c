package scan

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"sort"
	"strconv"
	"strings"
	"time"
)

// SlurmOptions configure the job-array script of [WriteSlurmScript] and
// [Submit]. Empty strings leave a setting to the cluster's defaults.
type SlurmOptions struct {
	// Runner is how a task starts memix on a compute node: the program
	// path must be valid there. Runner.Env is exported in the script.
	Runner Runner
	// JobName is --job-name (default "memix-scan").
	JobName string
	// Partition is --partition.
	Partition string
	// Time is --time in Slurm's syntax, e.g. "02:00:00" or "1-00:00:00".
	Time string
	// CPUsPerTask is --cpus-per-task and memix's --threads (default 1).
	CPUsPerTask int
	// Mem is --mem, e.g. "4G".
	Mem string
	// MaxRunning limits the tasks running at once (the %K of --array);
	// 0 means no limit.
	MaxRunning int
	// Warning is how long before the time limit Slurm warns the task
	// (--signal=B:USR1@seconds); the script then stops memix with SIGTERM
	// so it writes a checkpoint. 0 means 300 s, or a tenth of a shorter
	// Time. Slurm delivers the warning up to a minute late.
	Warning time.Duration
	// NoSelfRequeue turns off the requeue after such a warning. By default
	// a task stopped by the warning requeues itself (scontrol requeue) and
	// resumes from its checkpoint when it runs again.
	NoSelfRequeue bool
	// Extra holds further sbatch options, one per #SBATCH line, e.g.
	// "--account=proj42" or "--qos=short".
	Extra []string
	// Sbatch and Squeue are the commands (default "sbatch", "squeue").
	Sbatch, Squeue string
}

// A JobRecord is one submitted array job, kept in slurm/jobs.json.
type JobRecord struct {
	JobID     string    `json:"job_id"`
	Submitted time.Time `json:"submitted"`
	// Script is the submitted script's copy, relative to the scan folder.
	Script string `json:"script"`
	// Tasks maps array task numbers to point identifiers.
	Tasks []TaskPoint `json:"tasks"`
}

// A TaskPoint is one array task of a job.
type TaskPoint struct {
	Task int    `json:"task"`
	ID   string `json:"id"`
}

// ErrNothingToSubmit is returned by [Submit] and [WriteSlurmScript] when
// every point is finished, queued or running.
var ErrNothingToSubmit = errors.New("scan: nothing to submit: every point is finished, queued or running")

// WriteSlurmScript writes scanDir/slurm/array.sh, a job-array script with
// one task per point that is not finished and not already queued or
// running in a job of this scan (according to squeue, when it exists). The
// array task number is the point's index and the script maps it to the
// point through the point list written into it. It returns the script path
// and the indices; it submits nothing (the --dry-run of the command).
//
// Each task: takes the point's lock (flock, when available) so no two runs
// share a point; does nothing for a finished point; resumes from a
// checkpoint (memix run --resume) unless the run that wrote it failed;
// otherwise moves an old output aside (out.attempt-N) and runs memix from
// the point's config.yaml. memix's output goes to the point's stdout.log
// and stderr.log; a failure is recorded in failure.txt and failures.log
// exactly as [RunLocal] does. Slurm's own logs go to slurm/logs/%A_%a.*.
// On the time-limit warning (SIGUSR1) or SIGTERM the task sends SIGTERM to
// memix and waits for its checkpoint; after the warning it requeues itself
// unless NoSelfRequeue.
func WriteSlurmScript(ctx context.Context, scanDir string, opt SlurmOptions) (string, []int, error) {
	sc, err := Open(scanDir)
	if err != nil {
		return "", nil, err
	}
	st, err := Status(ctx, scanDir, StatusOptions{Squeue: opt.Squeue})
	if err != nil {
		return "", nil, err
	}
	var idx []int
	for _, p := range st.Points {
		switch p.State {
		case Finished, Queued, Running:
			continue
		}
		idx = append(idx, p.Index)
	}
	if len(idx) == 0 {
		return "", nil, ErrNothingToSubmit
	}
	text, err := slurmScript(sc, idx, opt)
	if err != nil {
		return "", nil, err
	}
	if err := os.MkdirAll(filepath.Join(sc.Dir, slurmDir, "logs"), 0o755); err != nil {
		return "", nil, err
	}
	path := filepath.Join(sc.Dir, slurmDir, "array.sh")
	if err := writeFileAtomic(path, text); err != nil {
		return "", nil, err
	}
	if err := os.Chmod(path, 0o755); err != nil {
		return "", nil, err
	}
	return path, idx, nil
}

// Submit writes the array script (see [WriteSlurmScript]), submits it with
// "sbatch --parsable", records the job in slurm/jobs.json with a copy of
// the script as slurm/job-ID.sh, and returns the record. Calling it again
// later submits only the points that are not finished (nor queued or
// running), listing their array indices explicitly.
func Submit(ctx context.Context, scanDir string, opt SlurmOptions) (JobRecord, error) {
	var rec JobRecord
	path, idx, err := WriteSlurmScript(ctx, scanDir, opt)
	if err != nil {
		return rec, err
	}
	sc, err := Open(scanDir)
	if err != nil {
		return rec, err
	}
	sbatch := opt.Sbatch
	if sbatch == "" {
		sbatch = "sbatch"
	}
	cmd := exec.CommandContext(ctx, sbatch, "--parsable", path)
	cmd.Dir = sc.Dir
	var stdout, stderr bytes.Buffer
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	if err := cmd.Run(); err != nil {
		return rec, fmt.Errorf("scan: %s --parsable %s: %v: %s", sbatch, path, err, strings.TrimSpace(stderr.String()))
	}
	// --parsable prints "JOBID" or "JOBID;CLUSTER".
	line := strings.TrimSpace(stdout.String())
	if i := strings.LastIndexByte(line, '\n'); i >= 0 {
		line = line[i+1:]
	}
	id, _, _ := strings.Cut(line, ";")
	if _, err := strconv.Atoi(id); err != nil {
		return rec, fmt.Errorf("scan: sbatch printed %q, not a job id", stdout.String())
	}
	rec = JobRecord{JobID: id, Submitted: time.Now().UTC().Truncate(time.Second), Script: filepath.Join(slurmDir, "job-"+id+".sh")}
	for _, i := range idx {
		rec.Tasks = append(rec.Tasks, TaskPoint{Task: i, ID: sc.Points[i].ID})
	}
	script, err := os.ReadFile(path)
	if err != nil {
		return rec, err
	}
	if err := writeFileAtomic(filepath.Join(sc.Dir, rec.Script), script); err != nil {
		return rec, err
	}
	jobs, err := readJobs(sc.Dir)
	if err != nil {
		return rec, err
	}
	jobs = append(jobs, rec)
	b, err := json.MarshalIndent(jobs, "", "  ")
	if err != nil {
		return rec, err
	}
	return rec, writeFileAtomic(filepath.Join(sc.Dir, slurmDir, jobsFile), append(b, '\n'))
}

// Jobs returns the array jobs submitted for the scan in scanDir, oldest first.
func Jobs(scanDir string) ([]JobRecord, error) {
	abs, err := filepath.Abs(scanDir)
	if err != nil {
		return nil, err
	}
	return readJobs(abs)
}

func readJobs(dir string) ([]JobRecord, error) {
	b, err := os.ReadFile(filepath.Join(dir, slurmDir, jobsFile))
	if errors.Is(err, os.ErrNotExist) {
		return nil, nil
	}
	if err != nil {
		return nil, err
	}
	var jobs []JobRecord
	if err := json.Unmarshal(b, &jobs); err != nil {
		return nil, fmt.Errorf("scan: %s: %w", filepath.Join(dir, slurmDir, jobsFile), err)
	}
	return jobs, nil
}

// slurmDuration reads a time limit in sbatch's forms: MM, MM:SS, HH:MM:SS,
// D-HH, D-HH:MM, D-HH:MM:SS. "" , UNLIMITED and INFINITE give 0.
func slurmDuration(s string) (time.Duration, error) {
	switch strings.ToUpper(s) {
	case "", "UNLIMITED", "INFINITE":
		return 0, nil
	}
	bad := fmt.Errorf("scan: Slurm time limit %q: use MM, MM:SS, HH:MM:SS, D-HH, D-HH:MM or D-HH:MM:SS", s)
	days := 0
	rest := s
	if d, r, ok := strings.Cut(s, "-"); ok {
		n, err := strconv.Atoi(d)
		if err != nil || n < 0 {
			return 0, bad
		}
		days, rest = n, r
	}
	var f []int
	for _, part := range strings.Split(rest, ":") {
		n, err := strconv.Atoi(part)
		if err != nil || n < 0 {
			return 0, bad
		}
		f = append(f, n)
	}
	var h, m, sec int
	switch {
	case days > 0 || strings.Contains(s, "-"):
		if len(f) > 3 {
			return 0, bad
		}
		f = append(f, 0, 0)
		h, m, sec = f[0], f[1], f[2]
	case len(f) == 1:
		m = f[0]
	case len(f) == 2:
		m, sec = f[0], f[1]
	case len(f) == 3:
		h, m, sec = f[0], f[1], f[2]
	default:
		return 0, bad
	}
	return time.Duration(((days*24+h)*60+m)*60+sec) * time.Second, nil
}

// arraySpec compresses sorted indices into "0-3,7,9-12".
func arraySpec(idx []int) string {
	s := append([]int(nil), idx...)
	sort.Ints(s)
	var parts []string
	for i := 0; i < len(s); {
		j := i
		for j+1 < len(s) && s[j+1] == s[j]+1 {
			j++
		}
		if j > i {
			parts = append(parts, fmt.Sprintf("%d-%d", s[i], s[j]))
		} else {
			parts = append(parts, strconv.Itoa(s[i]))
		}
		i = j + 1
	}
	return strings.Join(parts, ",")
}

var shellSafe = regexp.MustCompile(`^[A-Za-z0-9_@%+=:,./-]+$`)

// shellQuote quotes s for bash.
func shellQuote(s string) string {
	if s != "" && shellSafe.MatchString(s) {
		return s
	}
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}

var envName = regexp.MustCompile(`^[A-Za-z_][A-Za-z0-9_]*$`)

// sbatchValue rejects values that would break an #SBATCH line.
func sbatchValue(name, v string) error {
	if strings.ContainsAny(v, "\n\r") || strings.TrimSpace(v) != v || strings.Contains(v, " ") {
		return fmt.Errorf("scan: Slurm option %s = %q: must be one word without spaces or line breaks", name, v)
	}
	return nil
}

func slurmScript(sc *Scan, idx []int, opt SlurmOptions) ([]byte, error) {
	cpus := opt.CPUsPerTask
	if cpus < 1 {
		cpus = 1
	}
	limit, err := slurmDuration(opt.Time)
	if err != nil {
		return nil, err
	}
	warn := opt.Warning
	if warn == 0 {
		// 300 s, or a tenth of a shorter time limit.
		warn = 300 * time.Second
		if limit > 0 && limit/10 < warn {
			warn = max(limit/10, time.Second)
		}
	}
	if warn < time.Second {
		return nil, fmt.Errorf("scan: Slurm warning time %s: must be at least 1 s", warn)
	}
	if limit > 0 && warn >= limit {
		return nil, fmt.Errorf("scan: Slurm warning time %s is not shorter than the time limit %s (%s)", warn, opt.Time, limit)
	}
	name := opt.JobName
	if name == "" {
		name = "memix-scan"
	}
	if strings.ContainsAny(sc.Dir, " \n\r") {
		return nil, fmt.Errorf("scan: the scan folder %q contains a space or line break, which #SBATCH lines cannot carry; move it", sc.Dir)
	}
	var b strings.Builder
	w := func(format string, a ...any) { fmt.Fprintf(&b, format, a...) }
	opts := []struct{ k, v string }{{"job-name", name}, {"partition", opt.Partition}, {"time", opt.Time}, {"mem", opt.Mem}}
	for _, o := range opts {
		if err := sbatchValue(o.k, o.v); o.v != "" && err != nil {
			return nil, err
		}
	}
	for _, e := range opt.Extra {
		if !strings.HasPrefix(e, "-") || strings.ContainsAny(e, "\n\r") {
			return nil, fmt.Errorf("scan: extra Slurm option %q: give one option such as --account=NAME", e)
		}
	}
	spec := arraySpec(idx)
	if opt.MaxRunning > 0 {
		spec += "%" + strconv.Itoa(opt.MaxRunning)
	}
	logs := filepath.Join(sc.Dir, slurmDir, "logs")
	w("#!/bin/bash\n")
	w("# memix scan job array: array task N runs points[N] of the list below\n# (index N of %s when this was written).\n", filepath.Join(sc.Dir, pointsCSV))
	w("# Written %s for %d points; submit with sbatch, or let memix scan do it.\n", time.Now().UTC().Format(time.RFC3339), len(idx))
	w("#SBATCH --job-name=%s\n", name)
	w("#SBATCH --array=%s\n", spec)
	if opt.Partition != "" {
		w("#SBATCH --partition=%s\n", opt.Partition)
	}
	if opt.Time != "" {
		w("#SBATCH --time=%s\n", opt.Time)
	}
	w("#SBATCH --cpus-per-task=%d\n", cpus)
	if opt.Mem != "" {
		w("#SBATCH --mem=%s\n", opt.Mem)
	}
	w("#SBATCH --chdir=%s\n", sc.Dir)
	w("#SBATCH --output=%s/%%A_%%a.out\n", logs)
	w("#SBATCH --error=%s/%%A_%%a.err\n", logs)
	w("#SBATCH --open-mode=append\n")
	w("#SBATCH --signal=B:USR1@%d\n", int(warn.Seconds()))
	w("#SBATCH --requeue\n")
	for _, e := range opt.Extra {
		w("#SBATCH %s\n", e)
	}
	w("set -u\n\n")
	w("scan=%s\n", shellQuote(sc.Dir))
	var cmd []string
	for _, c := range opt.Runner.command() {
		cmd = append(cmd, shellQuote(c))
	}
	w("memix=(%s)\n", strings.Join(cmd, " "))
	for _, e := range opt.Runner.Env {
		k, v, ok := strings.Cut(e, "=")
		if !ok || !envName.MatchString(k) {
			return nil, fmt.Errorf("scan: runner environment entry %q: want NAME=VALUE", e)
		}
		w("export %s=%s\n", k, shellQuote(v))
	}
	w("threads=${SLURM_CPUS_PER_TASK:-%d}\n", cpus)
	self := 1
	if opt.NoSelfRequeue {
		self = 0
	}
	w("self_requeue=%d\n", self)
	w("# The point list when the script was written: array task N runs points[N].\n")
	w("points=(\n")
	for _, p := range sc.Points {
		w("%s\n", p.ID)
	}
	w(")\n")
	b.WriteString(arrayBody)
	return []byte(b.String()), nil
}

// arrayBody is the part of the array script that does not depend on the
// scan. It mirrors runPoint: same files, same decisions.
const arrayBody = `
task=${SLURM_ARRAY_TASK_ID:?this script runs as a task of a Slurm job array}
job=${SLURM_ARRAY_JOB_ID:-${SLURM_JOB_ID:-none}}_$task
log() { echo "memix scan [$job]: $*" >&2; }
if [ "$task" -ge "${#points[@]}" ]; then
	log "array task $task has no point: the scan has ${#points[@]}"
	exit 1
fi
id=${points[$task]}
dir=$scan/points/$id
out=$dir/out
[ -f "$dir/config.yaml" ] || { log "point $id: $dir/config.yaml is missing"; exit 1; }

# One run per point at a time, whoever runs it (RunLocal takes the same lock).
if command -v flock >/dev/null 2>&1; then
	exec 9>>"$dir/.lock"
	if ! flock -n 9; then
		log "point $id is being run by another process; nothing to do"
		exit 0
	fi
fi

status_of() {
	sed -n 's/.*"status"[[:space:]]*:[[:space:]]*"\([A-Za-z_]*\)".*/\1/p' "$1" 2>/dev/null | head -n 1
}
now() { date -u +%Y-%m-%dT%H:%M:%SZ; }

status=$(status_of "$out/summary.json")
if [ "$status" = finished ]; then
	log "point $id is finished; nothing to do"
	exit 0
fi
if [ -f "$out/checkpoint.h5" ] && [ "$status" != failed ]; then
	args=(run --resume "$out" --quiet --threads "$threads")
	log "point $id: resuming from its checkpoint"
else
	if [ -e "$out" ]; then
		k=1
		while [ -e "$dir/out.attempt-$k" ]; do k=$((k + 1)); done
		mv "$out" "$dir/out.attempt-$k"
		log "point $id: previous output moved to out.attempt-$k"
	fi
	args=(run "$dir/config.yaml" -o "$out" --quiet --threads "$threads")
	log "point $id: starting"
fi
rm -f "$dir/failure.txt"
printf 'kind=slurm\nhost=%s\npid=%s\njob=%s\nsince=%s\n' "$(hostname)" "$$" "$job" "$(now)" >"$dir/running"
trap 'rm -f "$dir/running"' EXIT

off=$(stat -c %s "$dir/stderr.log" 2>/dev/null || echo 0)
echo "# memix scan: $(now) ${memix[*]} ${args[*]} (Slurm task $job)" >>"$dir/stdout.log"
child= warned=0 signalled=0
stop_memix() {
	signalled=1
	if [ -n "$child" ]; then kill -TERM "$child" 2>/dev/null; fi
}
trap 'warned=1; log "time-limit warning: stopping memix (SIGTERM) for a checkpoint"; stop_memix' USR1
trap 'log "SIGTERM: stopping memix"; stop_memix' TERM
"${memix[@]}" "${args[@]}" >>"$dir/stdout.log" 2>>"$dir/stderr.log" &
child=$!
if [ "$signalled" = 1 ]; then kill -TERM "$child" 2>/dev/null; fi
wait "$child"
rc=$?
# A trapped signal interrupts wait with 128+N; wait again for memix's own status.
while [ "$rc" -gt 128 ] && [ "$signalled" = 1 ]; do
	signalled=0
	wait "$child"
	rc=$?
done

case $rc in
0)
	if [ "$(status_of "$out/summary.json")" = finished ]; then
		log "point $id finished"
		exit 0
	fi
	msg="memix exited 0 but out/summary.json does not say \"finished\""
	;;
3)
	if [ "$warned" = 1 ] && [ "$self_requeue" = 1 ]; then
		log "point $id interrupted with a checkpoint; requeueing the task to resume it"
		scontrol requeue "$job" && exit 0
		log "scontrol requeue failed; resubmit the scan to resume"
	else
		log "point $id interrupted with a checkpoint; the next submission resumes it"
	fi
	exit 3
	;;
*)
	msg="memix: exit status $rc"
	;;
esac
{
	echo "$msg"
	err=$(sed -n 's/.*"error"[[:space:]]*:[[:space:]]*"\(.*\)".*/\1/p' "$out/summary.json" 2>/dev/null | head -n 1)
	if [ -n "$err" ]; then echo "summary error: $err"; fi
	tail=$(tail -c +$((off + 1)) "$dir/stderr.log" 2>/dev/null | tail -n 20)
	if [ -n "$tail" ]; then printf 'stderr (last lines):\n%s\n' "$tail"; fi
} >"$dir/.failure.tmp" && mv "$dir/.failure.tmp" "$dir/failure.txt"
{
	echo "--- $(now) (Slurm task $job on $(hostname))"
	cat "$dir/failure.txt"
} >>"$dir/failures.log"
log "point $id failed: $msg"
[ "$rc" -eq 0 ] && rc=1
exit "$rc"
`
