package outputs

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"
)

// SeriesName is the file name of the time series in an output directory.
const SeriesName = "series.csv"

// Column is one column of a series: a name and the unit of its values
// ("1" for a dimensionless number).
type Column struct {
	Name string // [A-Za-z0-9_.+-]+
	Unit string // no comma, quote, bracket or line break
}

// header returns the header cell "name [unit]".
func (c Column) header() string { return c.Name + " [" + c.Unit + "]" }

// seriesFile is what a Series writes to: an *os.File opened for appending.
type seriesFile interface {
	io.Writer
	Sync() error
	Close() error
}

// Series appends rows of numbers to a CSV file, one row per call, each row
// handed to the operating system by a single write as soon as it is given
// (so a crash of the process loses no row and tears none; a power loss may
// tear the last one, which ResumeSeries removes). Sync makes the rows
// durable; call it before writing a checkpoint. Write errors are sticky:
// after one, every call returns it (resume the run to repair the file). A
// Series is not safe for concurrent use.
type Series struct {
	path string
	f    seriesFile
	cols []Column
	row  []byte // scratch for one row
	rows int
	err  error
}

func checkColumns(cols []Column) error {
	if len(cols) == 0 {
		return errors.New("no columns")
	}
	seen := map[string]bool{}
	for _, c := range cols {
		if err := checkName("column", c.Name); err != nil {
			return err
		}
		if seen[c.Name] {
			return fmt.Errorf("column %q given twice", c.Name)
		}
		seen[c.Name] = true
		if c.Unit == "" || strings.ContainsAny(c.Unit, ",\"[]\r\n") {
			return fmt.Errorf("column %q: unit %q must be non-empty without comma, quote, bracket or line break", c.Name, c.Unit)
		}
	}
	return nil
}

func headerLine(cols []Column) string {
	h := make([]string, len(cols))
	for i, c := range cols {
		h[i] = c.header()
	}
	return strings.Join(h, ",") + "\n"
}

// CreateSeries creates the series file path with a header line naming cols
// (written atomically: the file appears with its complete header or not at
// all) and returns a Series that appends to it. It returns an error if the
// file exists (resume it with ResumeSeries) or a column is malformed.
func CreateSeries(path string, cols []Column) (*Series, error) {
	if err := checkColumns(cols); err != nil {
		return nil, fmt.Errorf("outputs: series %s: %w", path, err)
	}
	if _, err := os.Stat(path); err == nil {
		return nil, fmt.Errorf("outputs: %s already exists: resume the run or choose an empty directory", path)
	}
	h := headerLine(cols)
	if err := WriteFileAtomic(path, func(w io.Writer) error { _, err := io.WriteString(w, h); return err }); err != nil {
		return nil, err
	}
	return openSeries(path, cols, 0)
}

func openSeries(path string, cols []Column, rows int) (*Series, error) {
	f, err := os.OpenFile(path, os.O_WRONLY|os.O_APPEND, 0)
	if err != nil {
		return nil, fmt.Errorf("outputs: series: %w", err)
	}
	return &Series{path: path, f: f, cols: append([]Column(nil), cols...), row: make([]byte, 0, 32*len(cols)), rows: rows}, nil
}

// ResumeSeries reopens the series file path of a run resumed from a
// checkpoint at step lastStep: it checks that the header names cols,
// keeps the rows up to and including the last one whose column stepCol is
// at most lastStep (stopping at the first incomplete or malformed line),
// truncates the file after them, syncs it, and appends from there. A
// missing file is created as by CreateSeries.
func ResumeSeries(path string, cols []Column, stepCol string, lastStep int64) (*Series, error) {
	if err := checkColumns(cols); err != nil {
		return nil, fmt.Errorf("outputs: series %s: %w", path, err)
	}
	sc := -1
	for i, c := range cols {
		if c.Name == stepCol {
			sc = i
		}
	}
	if sc < 0 {
		panic(fmt.Sprintf("outputs: step column %q is not a column", stepCol))
	}
	b, err := os.ReadFile(path)
	if errors.Is(err, os.ErrNotExist) {
		return CreateSeries(path, cols)
	}
	if err != nil {
		return nil, fmt.Errorf("outputs: resume series: %w", err)
	}
	h := headerLine(cols)
	if !bytes.HasPrefix(b, []byte(h)) {
		got, _, _ := strings.Cut(string(b), "\n")
		return nil, fmt.Errorf("outputs: resume %s: header %q does not match this run's %q", path, got, strings.TrimSuffix(h, "\n"))
	}
	keep, rows := len(h), 0
	for rest := b[keep:]; len(rest) > 0; {
		line, tail, complete := bytes.Cut(rest, []byte("\n"))
		if !complete {
			break
		}
		cells := strings.Split(string(line), ",")
		if len(cells) != len(cols) {
			break
		}
		step, err := strconv.ParseFloat(cells[sc], 64)
		if err != nil || step > float64(lastStep) {
			break
		}
		keep += len(line) + 1
		rows++
		rest = tail
	}
	if keep < len(b) {
		if err := os.Truncate(path, int64(keep)); err != nil {
			return nil, fmt.Errorf("outputs: resume series: %w", err)
		}
	}
	s, err := openSeries(path, cols, rows)
	if err != nil {
		return nil, err
	}
	if err := s.Sync(); err != nil {
		s.f.Close()
		return nil, err
	}
	return s, nil
}

// Columns returns the columns. The slice is shared and must not be
// modified.
func (s *Series) Columns() []Column { return s.cols }

// Rows returns the number of rows in the file (kept by a resume plus
// appended).
func (s *Series) Rows() int { return s.rows }

// Append writes one row. values must have one number per column (else it
// panics). Numbers are written in the shortest form that reads back to the
// same float64 (integers without exponent up to 2⁵³; NaN, +Inf, -Inf as
// such). Append allocates nothing.
func (s *Series) Append(values ...float64) error {
	if len(values) != len(s.cols) {
		panic(fmt.Sprintf("outputs: series row of %d values for %d columns", len(values), len(s.cols)))
	}
	if s.err != nil {
		return s.err
	}
	if s.f == nil {
		return fmt.Errorf("outputs: append to %s: series is closed", s.path)
	}
	r := s.row[:0]
	for i, v := range values {
		if i > 0 {
			r = append(r, ',')
		}
		r = appendNumber(r, v)
	}
	r = append(r, '\n')
	s.row = r
	if _, err := s.f.Write(r); err != nil {
		s.err = fmt.Errorf("outputs: append to %s: %w", s.path, err)
		return s.err
	}
	s.rows++
	return nil
}

// appendNumber formats v as Append documents.
func appendNumber(b []byte, v float64) []byte {
	if v == math.Trunc(v) && math.Abs(v) <= 1<<53 {
		if v == 0 && math.Signbit(v) {
			return append(b, "-0"...)
		}
		return strconv.AppendInt(b, int64(v), 10)
	}
	return strconv.AppendFloat(b, v, 'g', -1, 64)
}

// Sync commits the rows written so far to stable storage.
func (s *Series) Sync() error {
	if s.err != nil || s.f == nil {
		return s.err
	}
	if err := s.f.Sync(); err != nil {
		s.err = fmt.Errorf("outputs: fsync %s: %w", s.path, err)
	}
	return s.err
}

// Close syncs and closes the file. It returns the first error of the
// Series. Calling Close twice returns the same result.
func (s *Series) Close() error {
	if s.f == nil {
		return s.err
	}
	err := s.Sync()
	if cerr := s.f.Close(); err == nil && cerr != nil {
		err = fmt.Errorf("outputs: close %s: %w", s.path, cerr)
		s.err = err
	}
	s.f = nil
	return err
}

// ReadSeries reads a series file: its columns (parsed back from the
// header) and its complete rows. It is meant for plotting and tests, not
// for huge files (everything is read into memory).
func ReadSeries(path string) ([]Column, [][]float64, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, nil, fmt.Errorf("outputs: read series: %w", err)
	}
	lines := strings.Split(string(b), "\n")
	var cols []Column
	for _, cell := range strings.Split(lines[0], ",") {
		name, unit, ok := strings.Cut(cell, " [")
		if !ok || !strings.HasSuffix(unit, "]") {
			return nil, nil, fmt.Errorf("outputs: %s: header cell %q is not \"name [unit]\"", path, cell)
		}
		cols = append(cols, Column{name, strings.TrimSuffix(unit, "]")})
	}
	var rows [][]float64
	// The last element is what follows the final newline: empty, or an
	// incomplete row, which is skipped.
	for n, line := range lines[1 : len(lines)-1] {
		cells := strings.Split(line, ",")
		if len(cells) != len(cols) {
			return nil, nil, fmt.Errorf("outputs: %s line %d: %d values for %d columns", path, n+2, len(cells), len(cols))
		}
		row := make([]float64, len(cells))
		for i, c := range cells {
			if row[i], err = strconv.ParseFloat(c, 64); err != nil {
				return nil, nil, fmt.Errorf("outputs: %s line %d column %s: %w", path, n+2, cols[i].Name, err)
			}
		}
		rows = append(rows, row)
	}
	return cols, rows, nil
}
