package scan

import (
	"errors"
	"fmt"
	"strconv"
	"strings"

	"github.com/memix-sim/memix/config"
)

// A Converter expresses the written quantity q (a number followed by a unit,
// such as "50 um") as a number in the given unit (such as "nm", giving 50000).
// The empty unit stands for SI base units, as a bare number does in a
// configuration file ("5 nm" in "" is 5e-9). It returns an error when q is not a quantity or its
// unit cannot be expressed in unit. [ConfigConverter] is the default.
type Converter func(q, unit string) (float64, error)

// ConfigConverter is the [Converter] of memix configuration files: it reads
// both q and unit with the config package's unit parser, so a range may
// mix any units of one dimension ("50 nm" to "50 um", "30 s" to "2 min",
// "0.89 mPa*s" to "0.1 P"). kT (k_B times the configured
// temperature) converts only to kT: the temperature of a point is not known
// when the range is expanded, so "40 kT" cannot be expressed in J, nor
// "1e-20 J" in kT.
func ConfigConverter(q, unit string) (float64, error) {
	u := "1"
	if unit != "" {
		u = "1 " + unit
	}
	a, errA := config.ParseQuantity(q)
	b, errB := config.ParseQuantity(u)
	if errA != nil || errB != nil {
		// kT is the one unit the zero parser lacks; the ratio of two
		// values in kT does not depend on its size, so any size will do.
		withKT := config.Parser{KT: 1}
		a1, errA1 := withKT.Parse(q)
		b1, errB1 := withKT.Parse(u)
		switch {
		case errA1 != nil:
			return 0, errA
		case errB1 != nil:
			return 0, fmt.Errorf("unit %q: %w", unit, errB)
		case (errA == nil) != (errB == nil):
			return 0, fmt.Errorf("cannot express %q in %q: kT depends on the temperature of the point; write both ends of the range in kT or neither", q, unit)
		}
		a, b = a1, b1
	}
	if unit == "" {
		return a.Value, nil // SI, like a bare number in a configuration
	}
	if a.Dim != b.Dim {
		return 0, fmt.Errorf("%w: %q is %s, %s is %s", config.ErrDimension, q, dimText(a.Dim), unit, dimText(b.Dim))
	}
	return a.Value / b.Value, nil
}

func dimText(d config.Dim) string {
	if d.Unit() == "" {
		return "a bare number"
	}
	return "in " + d.Unit()
}

// ValidateConfig checks a point's resolved configuration with the config
// package's validator, exactly as "memix run" will: every problem at once,
// each a *config.FieldError naming key, value, unit and valid range (or a
// *config.FileError when the text is not YAML). The MEMIX_* environment
// overrides apply, as they do to the runs, and so do the run-only checks
// (nothing to simulate, a grid that does not resolve the interface or the
// fastest-growing wavelength). It is the validator that the
// memix command passes to [Expand].
func ValidateConfig(pointYAML []byte) error {
	c, err := config.Parse(pointYAML, "point configuration")
	if err != nil {
		return err
	}
	// What memix run refuses although the file is valid (nothing to
	// simulate, an unresolved grid): better found before anything runs.
	var errs []error
	for _, p := range c.RunProblems() {
		errs = append(errs, p)
	}
	for _, p := range c.ResolutionWarnings() {
		errs = append(errs, p)
	}
	return errors.Join(errs...)
}

// splitQuantity splits "50 nm" (or "50nm", or "50") into its number and its
// unit text. The unit is "" for a bare number.
func splitQuantity(q string) (float64, string, error) {
	s := strings.TrimSpace(q)
	// The number is the longest prefix that parses as a float.
	end := 0
	for i := 1; i <= len(s); i++ {
		if _, err := strconv.ParseFloat(s[:i], 64); err == nil {
			end = i
		}
	}
	if end == 0 {
		return 0, "", fmt.Errorf("%q is not a number with an optional unit", q)
	}
	v, _ := strconv.ParseFloat(s[:end], 64)
	return v, strings.TrimSpace(s[end:]), nil
}

// formatNumber writes v with six significant digits, the precision of every
// value that a range generates (so identifiers do not depend on round-off).
func formatNumber(v float64) string {
	return strconv.FormatFloat(v, 'g', 6, 64)
}

// formatQuantity writes v followed by unit (no unit: the bare number).
func formatQuantity(v float64, unit string) string {
	if unit == "" {
		return formatNumber(v)
	}
	return formatNumber(v) + " " + unit
}
