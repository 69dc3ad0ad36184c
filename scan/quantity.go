package scan

import (
	"fmt"
	"strconv"
	"strings"
)

// A Converter expresses the written quantity q (a number followed by a unit,
// such as "50 um") as a number in the given unit (such as "nm", giving 50000).
// It returns an error when q is not a quantity or its unit cannot be
// expressed in unit. The memix command passes one built on the config
// package's unit parser; [LocalConverter] is the fallback.
type Converter func(q, unit string) (float64, error)

// siPrefixes are the decimal prefixes that [LocalConverter] understands.
// Both "u" and the micro signs stand for 10⁻⁶; "da" is left out on purpose.
var siPrefixes = map[string]float64{
	"a": 1e-18, "f": 1e-15, "p": 1e-12, "n": 1e-9, "u": 1e-6, "µ": 1e-6, "μ": 1e-6,
	"m": 1e-3, "c": 1e-2, "d": 1e-1, "h": 1e2, "k": 1e3, "M": 1e6, "G": 1e9,
	"T": 1e12, "P": 1e15,
}

// LocalConverter is a [Converter] that knows only decimal prefixes: it
// converts between units that are the same after removing at most one
// prefix from the front of each ("50 um" to "nm", "0.89 mPa*s" to "Pa*s").
// A prefix inside a compound unit ("1/ms") or units of the same dimension
// with different names ("min" and "s") are errors: write both ends of a
// range in one unit, or pass the config package's converter.
func LocalConverter(q, unit string) (float64, error) {
	v, u, err := splitQuantity(q)
	if err != nil {
		return 0, err
	}
	if u == unit {
		return v, nil
	}
	f, ok := prefixRatio(u, unit)
	if !ok {
		return 0, fmt.Errorf("cannot express %q in %q: units differ by more than a decimal prefix", q, unit)
	}
	return v * f, nil
}

// prefixRatio returns f such that 1 from = f to, when from and to share a
// base unit after stripping at most one prefix from each.
func prefixRatio(from, to string) (float64, bool) {
	type cand struct {
		base  string
		scale float64
	}
	split := func(u string) []cand {
		cs := []cand{{u, 1}}
		for p, s := range siPrefixes {
			if len(u) > len(p) && strings.HasPrefix(u, p) {
				cs = append(cs, cand{u[len(p):], s})
			}
		}
		return cs
	}
	for _, a := range split(from) {
		for _, b := range split(to) {
			if a.base == b.base {
				return a.scale / b.scale, true
			}
		}
	}
	return 0, false
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
