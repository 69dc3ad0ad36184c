package main

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"

	"github.com/memix-sim/memix/cmd/memix/internal/report"
	"github.com/memix-sim/memix/config"
)

// Helpers shared by the analysis commands (mobility, stability, response,
// inspect, mixing): physical values printed in SI for scripts and in a
// readable unit for people, and command-line quantities parsed with the
// configuration's quantity parser so that "2nm", "2 nm" and "0.002 um" all
// work and a mistake is reported like a configuration problem (flag name,
// value, unit, valid range; exit status 2).

// predictionNote is printed under every table of model predictions.
const predictionNote = "These are model predictions (continuum hydrodynamics of a flat membrane), not measurements."

// Dimensions without a named unit in package config.
const (
	dimWavenumber = -config.DimLength
	dimDrag       = config.DimForce - config.DimVelocity // N·s/m: force per velocity
	dimRotDrag    = config.DimEnergy + config.DimTime    // N·m·s: torque per angular velocity
	dimFlowPerF   = config.DimVelocity - config.DimForce // m/(N·s): velocity per force
)

// siUnit returns the SI unit memix prints for dimension d.
func siUnit(d config.Dim) string {
	switch d {
	case dimWavenumber:
		return "1/m"
	case dimDrag:
		return "N*s/m"
	case dimRotDrag:
		return "N*m*s"
	case config.DimRate:
		return "1/s"
	case dimFlowPerF:
		return "m/(N*s)"
	}
	return d.Unit()
}

// human writes v, an SI value of dimension d, in a readable unit.
func human(v float64, d config.Dim) string {
	if math.IsInf(v, 0) || math.IsNaN(v) {
		return config.FormatHuman(v, d)
	}
	pick := func(units []struct {
		name string
		si   float64
	}) string {
		best := units[0]
		for _, u := range units {
			if math.Abs(v) >= u.si {
				best = u
			}
		}
		return report.FormatFloat(v/best.si) + " " + best.name
	}
	type u = struct {
		name string
		si   float64
	}
	switch d {
	case dimWavenumber:
		return pick([]u{{"mm⁻¹", 1e3}, {"µm⁻¹", 1e6}, {"nm⁻¹", 1e9}})
	case dimDrag:
		return pick([]u{{"fN·s/µm", 1e-9}, {"pN·s/µm", 1e-6}, {"nN·s/µm", 1e-3}, {"N·s/m", 1}})
	case dimRotDrag:
		return pick([]u{{"pN·nm·ns", 1e-30}, {"pN·nm·µs", 1e-27}, {"pN·nm·ms", 1e-24}, {"pN·nm·s", 1e-21}, {"N·m·s", 1}})
	case config.DimRate:
		return report.FormatFloat(v) + " s⁻¹"
	case config.DimTime:
		if v == 0 {
			return "0 s"
		}
		if math.Abs(v) >= 3600 {
			return report.FormatFloat(v/3600) + " h"
		}
		if math.Abs(v) >= 60 {
			return report.FormatFloat(v/60) + " min"
		}
	case dimFlowPerF:
		return report.FormatFloat(v/1e6) + " µm/(pN·s)"
	}
	return config.FormatHuman(v, d)
}

// qcell is a physical value: SI in JSON and CSV, readable in text.
// Non-finite values are null in JSON and CSV and read "∞" or "NaN".
func qcell(v float64, d config.Dim) report.Cell {
	return report.Cell{Value: v, Text: human(v, d)}
}

// qcol is a column of physical values of dimension d.
func qcol(key, title string, d config.Dim) report.Column {
	return report.Column{Key: key, Title: title, Unit: siUnit(d), TextUnitInCells: true}
}

// energyText writes an energy also in k_BT.
func energyText(e, kT float64) string {
	return human(e, config.DimEnergy) + " = " + report.FormatFloat(e/kT) + " k_BT"
}

// flagError is a bad command-line value, reported like a configuration
// problem: flag, value, unit and valid range (exit status 2).
func flagError(flag, value, unit, valid string, err error) error {
	return &config.FieldError{Key: "--" + flag, Value: value, Unit: unit, Range: valid, Err: err}
}

// parseQuantityFlag parses the value of --flag as a quantity of dimension
// d with the configuration's parser (kT available as the energy unit); a
// bare number is in SI units. positive requires a finite value > 0.
func parseQuantityFlag(flag, text string, d config.Dim, kT float64, positive bool) (float64, error) {
	valid := "any"
	if positive {
		valid = "> 0"
	}
	q, err := config.Parser{KT: kT}.Parse(strings.TrimSpace(text))
	if err != nil {
		return 0, flagError(flag, text, siUnit(d), valid, err)
	}
	if _, perr := strconv.ParseFloat(strings.TrimSpace(text), 64); perr == nil {
		q.Dim = d // a bare number is in SI units, as in a configuration file
	}
	if q.Dim != d {
		return 0, flagError(flag, text, siUnit(d), valid,
			fmt.Errorf("%w: %s is %s, not %s", config.ErrDimension, text, q.Dim, d))
	}
	if math.IsNaN(q.Value) || math.IsInf(q.Value, 0) || (positive && !(q.Value > 0)) {
		return 0, flagError(flag, text, siUnit(d), valid, fmt.Errorf("%w: %s", config.ErrRange, human(q.Value, d)))
	}
	return q.Value, nil
}

// parseIntFlag checks an integer flag against [lo, hi].
func checkIntFlag(flag string, v, lo, hi int) error {
	if v < lo || v > hi {
		return flagError(flag, strconv.Itoa(v), "", fmt.Sprintf("[%d, %d]", lo, hi), config.ErrRange)
	}
	return nil
}

// inputError is a path given on the command line that is not what the
// command reads (a missing file, a file that is not a memix output):
// exit status 2, like a bad configuration.
type inputError struct {
	path string
	err  error
}

func (e inputError) Error() string {
	if e.path == "" {
		return e.err.Error() // the error names the path itself
	}
	return e.path + ": " + e.err.Error()
}
func (e inputError) Unwrap() error { return e.err }

// errBadInput marks inputError for exitCode.
var errBadInput = errors.New("bad input")

func (e inputError) Is(target error) bool { return target == errBadInput }

// logSpace returns n log-spaced values from lo to hi inclusive.
func logSpace(lo, hi float64, n int) []float64 {
	xs := make([]float64, n)
	if n == 1 {
		xs[0] = lo
		return xs
	}
	l0, l1 := math.Log(lo), math.Log(hi)
	for i := range xs {
		xs[i] = math.Exp(l0 + (l1-l0)*float64(i)/float64(n-1))
	}
	xs[0], xs[n-1] = lo, hi
	return xs
}
