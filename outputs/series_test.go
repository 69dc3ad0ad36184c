package outputs

import (
	"encoding/json"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
)

var seriesCols = []Column{{"time", "τ0"}, {"time_si", "s"}, {"step", "1"}, {"mix_h1", "ℓ0"}}

func seriesRow(step int) []float64 {
	t := 0.1 * float64(step)
	return []float64{t, t * 0.125, float64(step), math.Exp(-t) / 3}
}

func TestSeriesRoundTrip(t *testing.T) {
	path := filepath.Join(t.TempDir(), SeriesName)
	s, err := CreateSeries(path, seriesCols)
	if err != nil {
		t.Fatal(err)
	}
	tenth := 0.1
	var want [][]float64
	for step := 0; step < 5; step++ {
		want = append(want, seriesRow(step))
	}
	// Values that need care: NaN and infinities, −0, a large integer and
	// numbers that need all 17 significant digits.
	want = append(want, []float64{math.NaN(), math.Inf(1), 1 << 53, math.Copysign(0, -1)},
		[]float64{math.Inf(-1), tenth + 0.2, 1e300, math.SmallestNonzeroFloat64})
	for _, r := range want {
		if err := s.Append(r...); err != nil {
			t.Fatal(err)
		}
	}
	if err := s.Close(); err != nil {
		t.Fatal(err)
	}
	b, _ := os.ReadFile(path)
	header, _, _ := strings.Cut(string(b), "\n")
	if header != "time [τ0],time_si [s],step [1],mix_h1 [ℓ0]" {
		t.Errorf("header %q", header)
	}
	if !strings.Contains(string(b), ",4,") || !strings.Contains(string(b), ",9007199254740992,") {
		t.Errorf("integers not written plainly:\n%s", b)
	}
	cols, rows, err := ReadSeries(path)
	if err != nil {
		t.Fatal(err)
	}
	if len(cols) != len(seriesCols) {
		t.Fatalf("columns %v", cols)
	}
	for i := range cols {
		if cols[i] != seriesCols[i] {
			t.Errorf("column %d: %+v, want %+v", i, cols[i], seriesCols[i])
		}
	}
	if len(rows) != len(want) {
		t.Fatalf("%d rows, want %d", len(rows), len(want))
	}
	for i := range want {
		if !sameBits(rows[i], want[i]) && !(i == 5 && math.IsNaN(rows[i][0]) && sameBits(rows[i][1:], want[i][1:])) {
			t.Errorf("row %d: %v, want %v", i, rows[i], want[i])
		}
	}
	if err := s.Append(seriesRow(9)...); err == nil {
		t.Error("Append after Close succeeded")
	}
}

func TestSeriesAppendAllocatesNothing(t *testing.T) {
	s, err := CreateSeries(filepath.Join(t.TempDir(), SeriesName), seriesCols)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	row := seriesRow(3)
	s.Append(row...) // grows the row buffer once
	if a := testing.AllocsPerRun(100, func() { s.Append(row...) }); a != 0 {
		t.Errorf("Append allocates %v times per row", a)
	}
}

// A crash leaves rows past the checkpoint and a torn last line; the resume
// keeps the rows up to the checkpoint's step, drops the rest, and appends
// after them.
func TestSeriesResume(t *testing.T) {
	path := filepath.Join(t.TempDir(), SeriesName)
	s, err := CreateSeries(path, seriesCols)
	if err != nil {
		t.Fatal(err)
	}
	for step := 0; step < 10; step++ {
		s.Append(seriesRow(step)...)
	}
	s.Close()
	f, _ := os.OpenFile(path, os.O_WRONLY|os.O_APPEND, 0)
	f.WriteString("1.0,0.12") // torn row
	f.Close()

	if _, err := CreateSeries(path, seriesCols); err == nil {
		t.Error("CreateSeries overwrote an existing series")
	}
	other := append([]Column(nil), seriesCols...)
	other[3].Unit = "1"
	_, err = ResumeSeries(path, other, "step", 5)
	mustContain(t, err, "does not match", "mix_h1 [ℓ0]", "mix_h1 [1]")

	s, err = ResumeSeries(path, seriesCols, "step", 5)
	if err != nil {
		t.Fatal(err)
	}
	if s.Rows() != 6 {
		t.Errorf("kept %d rows, want 6 (steps 0…5)", s.Rows())
	}
	for step := 6; step < 8; step++ {
		s.Append(seriesRow(step)...)
	}
	if err := s.Close(); err != nil {
		t.Fatal(err)
	}
	_, rows, err := ReadSeries(path)
	if err != nil {
		t.Fatal(err)
	}
	if len(rows) != 8 {
		t.Fatalf("%d rows after the resume, want 8", len(rows))
	}
	for i, r := range rows {
		if !sameBits(r, seriesRow(i)) {
			t.Errorf("row %d: %v, want %v", i, r, seriesRow(i))
		}
	}

	// Resuming a torn file from before its first row keeps the header.
	f, _ = os.OpenFile(path, os.O_WRONLY|os.O_APPEND, 0)
	f.WriteString("3")
	f.Close()
	s, err = ResumeSeries(path, seriesCols, "step", -1)
	if err != nil || s.Rows() != 0 {
		t.Fatalf("resume before the first row: %v, %d rows", err, s.Rows())
	}
	s.Close()
	if b, _ := os.ReadFile(path); string(b) != headerLine(seriesCols) {
		t.Errorf("file after resume to nothing: %q", b)
	}
}

type failingWriter struct {
	seriesFile
	after int
}

func (f *failingWriter) Write(p []byte) (int, error) {
	if f.after--; f.after < 0 {
		return 3, &os.PathError{Op: "write", Path: "series.csv", Err: syscall.ENOSPC}
	}
	return f.seriesFile.Write(p)
}

// A write error names the file, wraps the cause, and sticks.
func TestSeriesWriteErrorSticks(t *testing.T) {
	path := filepath.Join(t.TempDir(), SeriesName)
	s, err := CreateSeries(path, seriesCols)
	if err != nil {
		t.Fatal(err)
	}
	s.f = &failingWriter{seriesFile: s.f, after: 2}
	for step := 0; step < 2; step++ {
		if err := s.Append(seriesRow(step)...); err != nil {
			t.Fatal(err)
		}
	}
	err = s.Append(seriesRow(2)...)
	mustContain(t, err, path)
	if !errors.Is(err, syscall.ENOSPC) {
		t.Errorf("%v does not wrap ENOSPC", err)
	}
	if err2 := s.Append(seriesRow(3)...); err2 != err {
		t.Errorf("second Append returned %v, want the first error", err2)
	}
	if cerr := s.Close(); cerr != err {
		t.Errorf("Close returned %v, want the first error", cerr)
	}
	// The torn row is removed by the resume.
	s, err = ResumeSeries(path, seriesCols, "step", 100)
	if err != nil || s.Rows() != 2 {
		t.Fatalf("resume after the failure: %v, %d rows", err, s.Rows())
	}
	s.Close()
}

func TestSeriesRejects(t *testing.T) {
	dir := t.TempDir()
	_, err := CreateSeries(filepath.Join(dir, "a.csv"), []Column{{"time", "τ0"}, {"time", "s"}})
	mustContain(t, err, `"time" given twice`)
	_, err = CreateSeries(filepath.Join(dir, "b.csv"), []Column{{"mix norm", "1"}})
	mustContain(t, err, `"mix norm"`)
	_, err = CreateSeries(filepath.Join(dir, "c.csv"), []Column{{"x", "a,b"}})
	mustContain(t, err, `unit "a,b"`)
	_, err = CreateSeries(filepath.Join(dir, "d.csv"), []Column{{"x", ""}})
	mustContain(t, err, "must be non-empty")
}

func TestWriteJSON(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, SummaryName)
	type summary struct {
		Steps     int64              `json:"steps"`
		FinalTime float64            `json:"final_time_tau0"`
		Rates     map[string]float64 `json:"rates"`
	}
	want := summary{Steps: 1200, FinalTime: 12.5, Rates: map[string]float64{"mix_h1": -0.25}}
	if err := WriteJSON(path, want); err != nil {
		t.Fatal(err)
	}
	b, _ := os.ReadFile(path)
	var got summary
	if err := json.Unmarshal(b, &got); err != nil || got.Steps != want.Steps || got.FinalTime != want.FinalTime || got.Rates["mix_h1"] != -0.25 {
		t.Errorf("read back %+v (%v), want %+v", got, err, want)
	}
	if !strings.HasSuffix(string(b), "}\n") || !strings.Contains(string(b), "\n  \"steps\": 1200") {
		t.Errorf("not indented JSON with a final newline:\n%s", b)
	}
	before := readAll(t, dir)
	fs := newFaultFS()
	fs.writeLimit = 10
	err := writeJSON(fs, path, summary{Steps: 1})
	mustContain(t, err, path)
	if !errors.Is(err, syscall.ENOSPC) {
		t.Errorf("%v does not wrap ENOSPC", err)
	}
	sameFiles(t, dir, before)
	mustContain(t, WriteJSON(path, map[string]float64{"rate": math.NaN()}), path, "unsupported value: NaN")
	sameFiles(t, dir, before)
}
