package config

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"
)

// Boltzmann is the Boltzmann constant k_B in J/K, exact since the 2019
// redefinition of the SI base units (BIPM, The International System of
// Units, 9th edition, 2019).
const Boltzmann = 1.380649e-23

// electronvolt in J, exact in the 2019 SI (BIPM SI brochure, 9th edition).
const electronvolt = 1.602176634e-19

// Sentinel errors wrapped by the errors of this package; test with
// errors.Is.
var (
	ErrSyntax     = errors.New("cannot parse value")
	ErrUnit       = errors.New("unknown unit")
	ErrDimension  = errors.New("wrong dimension")
	ErrRange      = errors.New("out of range")
	ErrUnknownKey = errors.New("unknown key")
	ErrConflict   = errors.New("conflicts with another key")
	ErrMissing    = errors.New("missing")
	// ErrFile: a file a key names cannot be used (missing, damaged, not
	// a memix file, another grid); memix run reports it under the key.
	ErrFile = errors.New("unusable file")
)

// Quantity is a parsed physical quantity: its value in SI base units and
// its dimension.
type Quantity struct {
	Value float64 // in SI base units (m, kg, s, K and products)
	Dim   Dim
}

// Dimension returns q.Dim.
func (q Quantity) Dimension() Dim { return q.Dim }

// SI returns q.Value.
func (q Quantity) SI() float64 { return q.Value }

// String writes q in the SI unit of its dimension, e.g. "1e-09 Pa*s*m";
// the text parses back to exactly q.
func (q Quantity) String() string { return FormatSI(q.Value, q.Dim) }

// QuantityError reports text that is not a valid quantity. It wraps
// ErrSyntax or ErrUnit.
type QuantityError struct {
	Input  string // the text given
	Offset int    // byte offset of the problem in Input
	Msg    string // what is wrong, with a hint where one helps
	Err    error  // ErrSyntax or ErrUnit
}

func (e *QuantityError) Error() string {
	return fmt.Sprintf("%v: %s (in %q at byte %d)", e.Err, e.Msg, e.Input, e.Offset)
}

func (e *QuantityError) Unwrap() error { return e.Err }

// Parser parses quantities. The zero value is ready to use; set KT to
// enable the unit kT.
type Parser struct {
	// KT is k_B·T in J, the value of the unit kT (also written kBT or
	// k_BT). Zero disables the unit: the temperature itself cannot be
	// given in kT.
	KT float64
}

// ParseQuantity parses s with the zero Parser (no kT).
func ParseQuantity(s string) (Quantity, error) { return Parser{}.Parse(s) }

// Parse parses a number followed by an optional unit expression, e.g.
// "0.89 mPa*s", "1e-9 Pa*s*m", "500 um^-2", "1 um^2/s", "2.5e3 Pa*s/m",
// "40 kT", "5 µm", "1/s". A bare number is in SI base units. See the
// package documentation for the grammar. The error is a *QuantityError.
func (p Parser) Parse(s string) (Quantity, error) {
	l := lexer{in: s, kT: p.KT}
	return l.quantity()
}

// unitDef is one unit: its dimension and its value in SI base units as
// factor·10^exp10 (decimal exponents are added exactly, and the number is
// rounded once when the quantity is assembled).
type unitDef struct {
	dim      Dim
	exp10    int
	factor   float64 // non-decimal part of the conversion, 1 for most units
	prefixes bool    // takes SI prefixes
	kT       bool    // the value is the Parser's KT
}

// lookupUnit returns the unit of the given name without prefix.
func lookupUnit(name string) (unitDef, bool) {
	switch name {
	case "m":
		return unitDef{dim: DimLength, factor: 1, prefixes: true}, true
	case "g":
		return unitDef{dim: DimMass, exp10: -3, factor: 1, prefixes: true}, true
	case "s":
		return unitDef{dim: DimTime, factor: 1, prefixes: true}, true
	case "K":
		return unitDef{dim: DimKelvin, factor: 1, prefixes: true}, true
	case "min":
		return unitDef{dim: DimTime, factor: 60}, true
	case "h":
		return unitDef{dim: DimTime, factor: 3600}, true
	case "Hz":
		return unitDef{dim: DimRate, factor: 1, prefixes: true}, true
	case "N":
		return unitDef{dim: DimForce, factor: 1, prefixes: true}, true
	case "Pa":
		return unitDef{dim: DimPressure, factor: 1, prefixes: true}, true
	case "J":
		return unitDef{dim: DimEnergy, factor: 1, prefixes: true}, true
	case "W":
		return unitDef{dim: DimEnergy - DimTime, factor: 1, prefixes: true}, true
	case "P": // poise, the CGS viscosity unit: 1 P = 1 g/(cm·s) = 0.1 Pa·s
		return unitDef{dim: DimViscosity, exp10: -1, factor: 1, prefixes: true}, true
	case "sP": // surface poise: 1 sP = 1 P·cm = 1 g/s = 1e-3 Pa·s·m
		return unitDef{dim: DimSurfViscosity, exp10: -3, factor: 1, prefixes: true}, true
	case "dyn": // 1 dyn = 1 g·cm/s² = 1e-5 N
		return unitDef{dim: DimForce, exp10: -5, factor: 1, prefixes: true}, true
	case "erg": // 1 erg = 1 dyn·cm = 1e-7 J
		return unitDef{dim: DimEnergy, exp10: -7, factor: 1, prefixes: true}, true
	case "eV":
		return unitDef{dim: DimEnergy, factor: electronvolt, prefixes: true}, true
	case "\u00c5", "\u212b": // letter A with ring, and the angstrom sign
		return unitDef{dim: DimLength, exp10: -10, factor: 1}, true
	case "kT", "kBT", "k_BT":
		return unitDef{dim: DimEnergy, factor: 1, kT: true}, true
	case "rad":
		return unitDef{dim: Dimensionless, factor: 1, prefixes: true}, true
	case "deg":
		return unitDef{dim: Dimensionless, factor: math.Pi / 180}, true
	case "%":
		return unitDef{dim: Dimensionless, exp10: -2, factor: 1}, true
	}
	return unitDef{}, false
}

// knownUnits lists the unit names for suggestions.
func knownUnits() []string {
	return []string{"m", "g", "kg", "s", "K", "min", "h", "Hz", "N", "Pa", "J", "W", "P", "sP",
		"dyn", "erg", "eV", "Å", "kT", "rad", "deg", "%", "nm", "um", "mm", "cm", "ms", "us",
		"pN", "mPa", "cP", "mN", "uN", "nN"}
}

// lookupPrefix returns the decimal exponent of an SI prefix.
func lookupPrefix(p string) (int, bool) {
	switch p {
	case "Y":
		return 24, true
	case "Z":
		return 21, true
	case "E":
		return 18, true
	case "P":
		return 15, true
	case "T":
		return 12, true
	case "G":
		return 9, true
	case "M":
		return 6, true
	case "k":
		return 3, true
	case "h":
		return 2, true
	case "da":
		return 1, true
	case "d":
		return -1, true
	case "c":
		return -2, true
	case "m":
		return -3, true
	case "u", "µ", "μ": // ASCII u, micro sign U+00B5, Greek mu U+03BC
		return -6, true
	case "n":
		return -9, true
	case "p":
		return -12, true
	case "f":
		return -15, true
	case "a":
		return -18, true
	case "z":
		return -21, true
	case "y":
		return -24, true
	}
	return 0, false
}

// resolveUnit returns the unit a name stands for: an exact name first,
// else an SI prefix followed by a unit that takes prefixes.
func resolveUnit(name string) (unitDef, bool) {
	if u, ok := lookupUnit(name); ok {
		return u, true
	}
	// Prefixes are one rune, or "da".
	for _, n := range []int{2, runeLen(name)} {
		if n <= 0 || n >= len(name) {
			continue
		}
		pe, ok := lookupPrefix(name[:n])
		if !ok {
			continue
		}
		u, ok := lookupUnit(name[n:])
		if ok && u.prefixes {
			u.exp10 += pe
			return u, true
		}
	}
	return unitDef{}, false
}

func runeLen(s string) int {
	_, n := utf8.DecodeRuneInString(s)
	return n
}

// term is a unit expression being built: dimension exponents, decimal
// exponent and the remaining factor.
type term struct {
	e      [4]int
	exp10  int
	factor float64
}

func unity() term { return term{factor: 1} }

func (t term) mul(u term) term {
	for i := range t.e {
		t.e[i] = saturate(t.e[i] + u.e[i])
	}
	t.exp10 = saturate(t.exp10 + u.exp10)
	t.factor *= u.factor
	return t
}

func (t term) pow(n int) term {
	for i := range t.e {
		t.e[i] = saturate(t.e[i] * n)
	}
	t.exp10 = saturate(t.exp10 * n)
	t.factor = math.Pow(t.factor, float64(n))
	return t
}

// saturate keeps exponents of absurd inputs ("((m^99)^99)^99…") far from
// integer overflow; anything this large is rejected later.
func saturate(x int) int {
	const lim = 1 << 30
	return min(max(x, -lim), lim)
}

// lexer is a recursive-descent parser over one input string.
type lexer struct {
	in    string
	pos   int
	kT    float64
	depth int // parenthesis nesting
}

const maxDepth = 8

func (l *lexer) fail(err error, pos int, format string, args ...any) *QuantityError {
	return &QuantityError{Input: l.in, Offset: pos, Msg: fmt.Sprintf(format, args...), Err: err}
}

func (l *lexer) peek() (rune, int) {
	if l.pos >= len(l.in) {
		return 0, 0
	}
	return utf8.DecodeRuneInString(l.in[l.pos:])
}

func (l *lexer) skipSpace() {
	for {
		r, n := l.peek()
		if n == 0 || !unicode.IsSpace(r) {
			return
		}
		l.pos += n
	}
}

func (l *lexer) quantity() (Quantity, error) {
	if !utf8.ValidString(l.in) {
		return Quantity{}, l.fail(ErrSyntax, 0, "the text is not valid UTF-8")
	}
	l.skipSpace()
	start := l.pos
	mant, exp, nonzero, err := l.number()
	if err != nil {
		return Quantity{}, err
	}
	numEnd := l.pos
	l.skipSpace()
	u := unity()
	if l.pos < len(l.in) {
		var qe *QuantityError
		if u, qe = l.unitExpr(); qe != nil {
			return Quantity{}, qe
		}
		l.skipSpace()
		if l.pos < len(l.in) {
			r, _ := l.peek()
			return Quantity{}, l.fail(ErrSyntax, l.pos, "unexpected %q", r)
		}
	}
	d, ok := makeDim(u.e)
	if !ok {
		return Quantity{}, l.fail(ErrSyntax, numEnd, "a unit exponent exceeds %d", maxExp)
	}
	// Round once: the decimal exponents of the number and of the units are
	// added exactly before the text is converted.
	e10 := exp + u.exp10
	if e10 > 400 || e10 < -400 {
		return Quantity{}, l.fail(ErrSyntax, start, "%s is outside the range of a float64", strings.TrimSpace(l.in))
	}
	v, perr := strconv.ParseFloat(mant+"e"+strconv.Itoa(e10), 64)
	if perr != nil && !errors.Is(perr, strconv.ErrRange) {
		return Quantity{}, l.fail(ErrSyntax, start, "bad number %q", l.in[start:numEnd])
	}
	v *= u.factor
	if math.IsInf(v, 0) || math.IsNaN(v) || (v == 0 && nonzero) {
		return Quantity{}, l.fail(ErrSyntax, start, "%s is outside the range of a float64", strings.TrimSpace(l.in))
	}
	return Quantity{Value: v, Dim: d}, nil
}

// number scans [+-]? (digits [. digits*] | . digits) ([eE] [+-]? digits)?
// and returns the mantissa text, the decimal exponent, and whether any
// mantissa digit is non-zero.
func (l *lexer) number() (mant string, exp int, nonzero bool, err error) {
	start := l.pos
	i := l.pos
	if i < len(l.in) && (l.in[i] == '+' || l.in[i] == '-') {
		i++
	}
	digits := 0
	for ; i < len(l.in) && (isDigit(l.in[i]) || l.in[i] == '.'); i++ {
		if l.in[i] == '.' {
			if strings.Contains(l.in[start:i], ".") {
				return "", 0, false, l.fail(ErrSyntax, i, "a second decimal point")
			}
			continue
		}
		digits++
		if l.in[i] != '0' {
			nonzero = true
		}
	}
	if digits == 0 {
		if strings.TrimSpace(l.in) == "" {
			return "", 0, false, l.fail(ErrSyntax, start, "empty value: expected a number with an optional unit")
		}
		lower := strings.ToLower(strings.TrimSpace(l.in))
		if strings.HasPrefix(lower, "inf") || strings.HasPrefix(lower, "+inf") || strings.HasPrefix(lower, "-inf") || strings.HasPrefix(lower, "nan") {
			return "", 0, false, l.fail(ErrSyntax, start, "infinite or NaN values are not allowed")
		}
		return "", 0, false, l.fail(ErrSyntax, start, "expected a number, e.g. \"200 nm\" or \"1e-9\"")
	}
	mant = l.in[start:i]
	if i < len(l.in) && (l.in[i] == 'e' || l.in[i] == 'E') {
		j := i + 1
		if j < len(l.in) && (l.in[j] == '+' || l.in[j] == '-') {
			j++
		}
		k := j
		for k < len(l.in) && isDigit(l.in[k]) {
			k++
		}
		if k > j { // an exponent; otherwise the e starts a unit (no unit does)
			if k-j > 4 {
				return "", 0, false, l.fail(ErrSyntax, i, "the exponent of %q is outside the range of a float64", l.in[start:k])
			}
			exp, _ = strconv.Atoi(l.in[i+1 : k]) // at most 4 digits and a sign
			i = k
		}
	}
	l.pos = i
	return mant, exp, nonzero, nil
}

func isDigit(c byte) bool { return c >= '0' && c <= '9' }

// unitExpr parses [product] { '/' factor }. A product after a division
// ("kg/m*s") is ambiguous and rejected.
func (l *lexer) unitExpr() (term, *QuantityError) {
	t := unity()
	l.skipSpace()
	if r, _ := l.peek(); r != '/' {
		var err *QuantityError
		if t, err = l.product(); err != nil {
			return t, err
		}
	}
	for {
		l.skipSpace()
		r, n := l.peek()
		if r != '/' {
			return t, nil
		}
		l.pos += n
		l.skipSpace()
		f, err := l.factor()
		if err != nil {
			return t, err
		}
		t = t.mul(f.pow(-1))
		save := l.pos
		l.skipSpace()
		if r, _ := l.peek(); isMulOp(r) || startsAtom(r) {
			return t, l.fail(ErrSyntax, save, "ambiguous unit after '/': write kg/(m*s) or kg*s/m")
		}
		l.pos = save
	}
}

func isMulOp(r rune) bool { return r == '*' || r == '·' || r == '⋅' }

func startsAtom(r rune) bool { return r == '(' || isNameRune(r) }

func isNameRune(r rune) bool {
	return unicode.IsLetter(r) || r == '_' || r == '%' || r == '°'
}

// product parses factor { ('*' | '·' | space) factor }.
func (l *lexer) product() (term, *QuantityError) {
	t, err := l.factor()
	if err != nil {
		return t, err
	}
	for {
		save := l.pos
		l.skipSpace()
		r, n := l.peek()
		switch {
		case isMulOp(r):
			l.pos += n
			l.skipSpace()
		case startsAtom(r):
			// implicit product: "Pa s"
		default:
			l.pos = save
			return t, nil
		}
		f, err := l.factor()
		if err != nil {
			return t, err
		}
		t = t.mul(f)
	}
}

// factor parses atom [ '^' [+-] digits | superscript digits ].
func (l *lexer) factor() (term, *QuantityError) {
	t, err := l.atom()
	if err != nil {
		return t, err
	}
	r, n := l.peek()
	switch {
	case r == '^':
		l.pos += n
		start := l.pos
		sign := 1
		if r, n := l.peek(); r == '-' || r == '+' {
			if r == '-' {
				sign = -1
			}
			l.pos += n
		}
		ds := l.pos
		for l.pos < len(l.in) && isDigit(l.in[l.pos]) {
			l.pos++
		}
		if l.pos == ds {
			return t, l.fail(ErrSyntax, start, "expected an integer exponent after '^'")
		}
		if l.pos-ds > 2 {
			return t, l.fail(ErrSyntax, start, "exponent %s is too large", l.in[ds:l.pos])
		}
		e, _ := strconv.Atoi(l.in[ds:l.pos])
		return t.pow(sign * e), nil
	case r == '⁻' || r == '⁺' || superDigit(r) >= 0:
		start := l.pos
		sign := 1
		if r == '⁻' || r == '⁺' {
			if r == '⁻' {
				sign = -1
			}
			l.pos += n
		}
		e, nd := 0, 0
		for {
			r, n := l.peek()
			d := superDigit(r)
			if d < 0 {
				break
			}
			e = 10*e + d
			nd++
			l.pos += n
		}
		if nd == 0 {
			return t, l.fail(ErrSyntax, start, "expected superscript digits")
		}
		if nd > 2 {
			return t, l.fail(ErrSyntax, start, "exponent is too large")
		}
		return t.pow(sign * e), nil
	}
	return t, nil
}

func superDigit(r rune) int {
	switch r {
	case '⁰':
		return 0
	case '¹':
		return 1
	case '²':
		return 2
	case '³':
		return 3
	case '⁴':
		return 4
	case '⁵':
		return 5
	case '⁶':
		return 6
	case '⁷':
		return 7
	case '⁸':
		return 8
	case '⁹':
		return 9
	}
	return -1
}

// atom parses a unit name or a parenthesised unit expression.
func (l *lexer) atom() (term, *QuantityError) {
	r, n := l.peek()
	if r == '(' {
		if l.depth >= maxDepth {
			return unity(), l.fail(ErrSyntax, l.pos, "parentheses nested deeper than %d", maxDepth)
		}
		open := l.pos
		l.pos += n
		l.depth++
		t, err := l.unitExpr()
		l.depth--
		if err != nil {
			return t, err
		}
		l.skipSpace()
		if r, n := l.peek(); r != ')' {
			return t, l.fail(ErrSyntax, open, "unclosed '('")
		} else {
			l.pos += n
		}
		return t, nil
	}
	start := l.pos
	for {
		r, n := l.peek()
		if n == 0 || !isNameRune(r) {
			break
		}
		l.pos += n
	}
	if l.pos == start {
		if n == 0 {
			return unity(), l.fail(ErrSyntax, start, "expected a unit at the end")
		}
		if r >= '0' && r <= '9' {
			return unity(), l.fail(ErrSyntax, start, "unexpected digit %q: write exponents as m^2", r)
		}
		return unity(), l.fail(ErrSyntax, start, "expected a unit, found %q", r)
	}
	name := l.in[start:l.pos]
	u, ok := resolveUnit(name)
	if !ok {
		return unity(), l.fail(ErrUnit, start, "%q%s", name, unitHint(name))
	}
	if r, _ := l.peek(); r >= '0' && r <= '9' {
		return unity(), l.fail(ErrSyntax, l.pos, "unexpected digit after %q: write exponents as %s^%c", name, name, r)
	}
	t := term{e: u.dim.Exps(), exp10: u.exp10, factor: u.factor}
	if u.kT {
		if !(l.kT > 0) {
			return t, l.fail(ErrUnit, start, "%q needs the temperature and cannot be used here", name)
		}
		t.factor = l.kT
	}
	return t, nil
}

// unitHint suggests what an unknown unit name may have meant.
func unitHint(name string) string {
	switch {
	case strings.HasPrefix(name, "°") || name == "C" || name == "degC" || name == "F":
		return ": temperatures are absolute, in K (25 °C = 298.15 K)"
	case name == "M" || strings.HasSuffix(name, "M") && len(name) <= 2:
		return ": concentrations are not supported; give a number per area, e.g. um^-2"
	}
	// Two known units run together: "Pas" for "Pa*s" (longest first unit
	// first, so that Pas is not read as P·as, poise attoseconds).
	for i := len(name) - 1; i > 0; i-- {
		if !utf8.RuneStart(name[i]) {
			continue
		}
		if _, ok := resolveUnit(name[:i]); ok {
			if _, ok := resolveUnit(name[i:]); ok {
				return fmt.Sprintf(": did you mean %s*%s?", name[:i], name[i:])
			}
		}
	}
	if s := closest(name, knownUnits(), 2); s != "" {
		return fmt.Sprintf(": did you mean %s?", s)
	}
	return ": known units are m, g, s, K, min, h, Hz, N, Pa, J, W, P (poise), sP (surface poise), dyn, erg, eV, Å, kT, rad, deg, % with SI prefixes (u or µ for micro)"
}
