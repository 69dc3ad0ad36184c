package scan

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"github.com/memix-sim/memix/outputs"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"github.com/memix-sim/memix/config"
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
		if err := validatePoints(pts, opt.Validate); err != nil {
			return nil, err
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

// maxProblems bounds the distinct problems that an invalid expansion lists.
const maxProblems = 20

// validatePoints validates every point and reports the problems, each
// once: the points that share a problem (a misspelt key is wrong in all of
// them) are counted under its first one. The validators' errors stay
// wrapped, so a caller can find a *config.FieldError with errors.As.
func validatePoints(pts []PointConfig, validate func([]byte) error) error {
	type problem struct {
		err    error
		first  *PointConfig
		others int
	}
	var probs []*problem
	byText := map[string]*problem{}
	bad := 0
	for i := range pts {
		err := validate(pts[i].Config)
		if err == nil {
			continue
		}
		bad++
		// One problem per joined error, so that a point with two
		// problems shares each with the other points separately.
		parts := []error{err}
		if j, ok := err.(interface{ Unwrap() []error }); ok {
			parts = j.Unwrap()
		}
		for _, e := range parts {
			k := problemKey(e)
			if p := byText[k]; p != nil {
				p.others++
				continue
			}
			p := &problem{err: e, first: &pts[i]}
			byText[k] = p
			probs = append(probs, p)
		}
	}
	if bad == 0 {
		return nil
	}
	var errs []error
	for i, p := range probs {
		if i == maxProblems {
			errs = append(errs, fmt.Errorf("... and %d more problems", len(probs)-maxProblems))
			break
		}
		where := fmt.Sprintf("point %s (%s)", p.first.ID, p.first.Label())
		switch p.others {
		case 0:
		case 1:
			where += " and 1 other point"
		default:
			where += fmt.Sprintf(" and %d other points", p.others)
		}
		errs = append(errs, fmt.Errorf("%s: %w", where, p.err))
	}
	return fmt.Errorf("scan: %d of %d points are invalid; nothing was written:\n%w", bad, len(pts), errors.Join(errs...))
}

// problemKey groups the problems of several points: a configuration key's
// problem by key and kind (a misspelt key is one problem whatever its
// value), anything else by its text.
func problemKey(err error) string {
	var fe *config.FieldError
	if errors.As(err, &fe) {
		return fe.Key + "\x00" + fe.Err.Error()
	}
	return err.Error()
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

// writeFileAtomic writes data through the project's atomic writer
// (outputs.WriteFileAtomic: temporary file, fsync, rename, directory
// fsync), so a reader never sees a half-written file.
func writeFileAtomic(path string, data []byte) error {
	return outputs.WriteFileAtomic(path, func(w io.Writer) error {
		_, err := w.Write(data)
		return err
	})
}
