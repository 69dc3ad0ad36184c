package scan

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
)

// Files and folders of a scan directory (see the package documentation).
const (
	sweepFile     = "sweep.yaml"
	baseFile      = "base.yaml"
	pointsJSON    = "points.json"
	pointsCSV     = "points.csv"
	pointsDir     = "points"
	pointConfig   = "config.yaml"
	pointOut      = "out"
	summaryFile   = "summary.json"
	checkpointH5  = "checkpoint.h5"
	seriesFile    = "series.csv"
	failureFile   = "failure.txt"
	failuresLog   = "failures.log"
	runningFile   = "running"
	lockFile      = ".lock"
	stdoutLog     = "stdout.log"
	stderrLog     = "stderr.log"
	slurmDir      = "slurm"
	jobsFile      = "jobs.json"
	gatherDir     = "gather"
	attemptPrefix = "out.attempt-"
)

// An AxisInfo describes one varied key of a scan.
type AxisInfo struct {
	Key string `json:"key"`
	// Unit is the unit of a range with units ("" otherwise).
	Unit string `json:"unit,omitempty"`
	// Log is true for a logarithmically spaced range.
	Log bool `json:"log,omitempty"`
	// Seed is true for the replicate seed key.
	Seed bool `json:"seed,omitempty"`
}

// A Scan is an expanded sweep on disk.
type Scan struct {
	// Dir is the scan directory (absolute).
	Dir string `json:"-"`
	// Axes are the varied keys in sweep order, the seed key last.
	Axes []AxisInfo `json:"axes"`
	// Points are all points in index order.
	Points []Point `json:"points"`
}

// PointDir returns the folder of the point with the given identifier.
func (s *Scan) PointDir(id string) string { return filepath.Join(s.Dir, pointsDir, id) }

// OutDir returns the memix output folder of the point (memix run -o).
func (s *Scan) OutDir(id string) string { return filepath.Join(s.Dir, pointsDir, id, pointOut) }

// ExpandOptions configure [Expand].
type ExpandOptions struct {
	// Validate checks one point's resolved configuration (YAML) and returns
	// every problem it finds; nil skips validation. The memix command
	// passes the config package's validator.
	Validate func(pointYAML []byte) error
}

// Expand expands the sweep into scanDir: it computes every point, validates
// every point's configuration (all of them, before writing anything), then
// writes sweep.yaml, base.yaml, points.json, points.csv and, for each point,
// points/ID/config.yaml.
//
// scanDir may already hold an expansion: points whose identifiers exist
// keep their folders and results, new points are added, and points no
// longer in the sweep keep their folders but leave the point list. A point
// whose configuration changed (say, the base was edited) is refused with an
// error if it has outputs; without outputs its config.yaml is rewritten.
func Expand(s *Sweep, scanDir string, opt ExpandOptions) (*Scan, error) {
	pts, err := s.Points()
	if err != nil {
		return nil, err
	}
	if opt.Validate != nil {
		var errs []error
		bad := 0
		for i := range pts {
			if err := opt.Validate(pts[i].Config); err != nil {
				bad++
				if bad <= 20 {
					errs = append(errs, fmt.Errorf("point %s (%s): %w", pts[i].ID, pts[i].Label(), err))
				}
			}
		}
		if bad > 0 {
			if bad > 20 {
				errs = append(errs, fmt.Errorf("... and %d more invalid points", bad-20))
			}
			return nil, fmt.Errorf("scan: %d of %d points are invalid; nothing was written:\n%w", bad, len(pts), errors.Join(errs...))
		}
	}
	dir, err := filepath.Abs(scanDir)
	if err != nil {
		return nil, err
	}
	sc := &Scan{Dir: dir}
	for _, k := range s.axisKeys {
		sc.Axes = append(sc.Axes, AxisInfo{Key: k, Unit: s.rangeAxes[k], Log: s.logSpacing[k], Seed: k == s.seedKey})
	}
	// Refuse changed configurations of points with outputs before writing.
	var errs []error
	for i := range pts {
		old, err := os.ReadFile(filepath.Join(sc.PointDir(pts[i].ID), pointConfig))
		if err != nil || bytes.Equal(old, pts[i].Config) {
			continue
		}
		if _, err := os.Stat(sc.OutDir(pts[i].ID)); err == nil {
			errs = append(errs, fmt.Errorf("point %s (%s): its configuration differs from %s, which already has outputs; expand into a new scan directory or remove that point's folder",
				pts[i].ID, pts[i].Label(), filepath.Join(sc.PointDir(pts[i].ID), pointConfig)))
		}
	}
	if len(errs) > 0 {
		return nil, errors.Join(errs...)
	}
	for i := range pts {
		pd := sc.PointDir(pts[i].ID)
		if err := os.MkdirAll(pd, 0o755); err != nil {
			return nil, err
		}
		if err := writeFileAtomic(filepath.Join(pd, pointConfig), pts[i].Config); err != nil {
			return nil, err
		}
		sc.Points = append(sc.Points, pts[i].Point)
	}
	if err := writeFileAtomic(filepath.Join(dir, sweepFile), s.Text); err != nil {
		return nil, err
	}
	if err := writeFileAtomic(filepath.Join(dir, baseFile), s.baseText); err != nil {
		return nil, err
	}
	if err := sc.writeLists(); err != nil {
		return nil, err
	}
	return sc, nil
}

func (s *Scan) writeLists() error {
	js, err := json.MarshalIndent(s, "", "  ")
	if err != nil {
		return err
	}
	if err := writeFileAtomic(filepath.Join(s.Dir, pointsJSON), append(js, '\n')); err != nil {
		return err
	}
	var buf bytes.Buffer
	w := csv.NewWriter(&buf)
	head := []string{"index", "id"}
	for _, a := range s.Axes {
		head = append(head, a.Key)
	}
	_ = w.Write(head)
	for _, p := range s.Points {
		row := []string{strconv.Itoa(p.Index), p.ID}
		for _, a := range s.Axes {
			v, _ := p.Param(a.Key)
			row = append(row, Param{Value: v}.Text())
		}
		_ = w.Write(row)
	}
	w.Flush()
	if err := w.Error(); err != nil {
		return err
	}
	return writeFileAtomic(filepath.Join(s.Dir, pointsCSV), buf.Bytes())
}

// Open reads the scan in dir (written by [Expand]).
func Open(dir string) (*Scan, error) {
	abs, err := filepath.Abs(dir)
	if err != nil {
		return nil, err
	}
	b, err := os.ReadFile(filepath.Join(abs, pointsJSON))
	if err != nil {
		if errors.Is(err, os.ErrNotExist) {
			return nil, fmt.Errorf("scan: %s is not a scan directory (no %s); expand a sweep into it first", dir, pointsJSON)
		}
		return nil, err
	}
	sc := &Scan{Dir: abs}
	if err := json.Unmarshal(b, sc); err != nil {
		return nil, fmt.Errorf("scan: %s: %w", filepath.Join(abs, pointsJSON), err)
	}
	for i, p := range sc.Points {
		if p.Index != i || !strings.HasPrefix(p.ID, "p-") {
			return nil, fmt.Errorf("scan: %s: point %d has index %d and id %q; the list is damaged", filepath.Join(abs, pointsJSON), i, p.Index, p.ID)
		}
	}
	return sc, nil
}

// writeFileAtomic writes data to a temporary file beside path and renames
// it, so a reader never sees a half-written file.
func writeFileAtomic(path string, data []byte) error {
	f, err := os.CreateTemp(filepath.Dir(path), "."+filepath.Base(path)+".tmp*")
	if err != nil {
		return err
	}
	tmp := f.Name()
	if _, err := f.Write(data); err != nil {
		f.Close()
		os.Remove(tmp)
		return err
	}
	if err := f.Close(); err != nil {
		os.Remove(tmp)
		return err
	}
	if err := os.Chmod(tmp, 0o644); err != nil {
		os.Remove(tmp)
		return err
	}
	if err := os.Rename(tmp, path); err != nil {
		os.Remove(tmp)
		return err
	}
	return nil
}
