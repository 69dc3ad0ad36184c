package config

import (
	"fmt"
	"math"
	"reflect"
	"strconv"
	"strings"
	"sync"
)

// The schema is read from the struct tags of Config once, on first use,
// and never changes afterwards.
//
// Tags of a key (a field of a leaf type):
//
//	key:"name"          the key's name within its section (required)
//	doc:"text"          what the key means, with sources for typical values (required)
//	default:"value"     the default, in the same syntax as a configuration value;
//	                    required unless the field is an Optional
//	fallback:"text"     for an Optional: what applies when the key is not given
//	range:"(0,inf)"     valid interval in SI units; ( ) open, [ ] closed, inf for ∞
//	enum:"a|b|c"        for a string: the valid values
//	even:"true"         for an int: must be even
//
// Leaf types: a named quantity type (Length, Viscosity, …, anything with a
// Dimension method and float64 underneath), float64 (a dimensionless
// number), int, bool, string, and Optional of any of these. A field of any
// other struct type is a section, tagged with key and doc; it may have a
// method check(at string, root *Config, report func(*FieldError)) for
// rules across its keys.

// leafKind is the Go shape of a key's value.
type leafKind int

const (
	kindQuantity leafKind = iota // a named quantity type; dimension from the type
	kindNumber                   // float64, dimensionless
	kindInt
	kindBool
	kindText
)

func (k leafKind) String() string {
	return [...]string{"quantity", "number", "integer", "boolean", "text"}[k]
}

type leaf struct {
	key      string // dotted, e.g. "subphase.upper.depth"
	section  string // dotted key of the enclosing section, "" at the top
	index    []int  // field index path from Config
	kind     leafKind
	dim      Dim
	optional bool
	def      string
	fallback string
	rng      interval
	hasRange bool
	enum     []string
	even     bool
	doc      string
}

type section struct {
	key   string
	doc   string
	index []int
}

type schema struct {
	items    []item // sections and keys in declaration order, a section before its keys
	leaves   []*leaf
	sections []*section
	byKey    map[string]*leaf
	secByKey map[string]*section
}

// item is a section or a key.
type item struct {
	leaf    *leaf
	section *section
}

type optionalMarker interface{ isOptional() }

type sectionChecker interface {
	check(at string, root *Config, report func(*FieldError))
}

var (
	physicalType = reflect.TypeFor[Physical]()
	optionalType = reflect.TypeFor[optionalMarker]()
	checkerType  = reflect.TypeFor[sectionChecker]()
)

// theSchema is computed once and read-only afterwards.
var theSchema = sync.OnceValue(func() *schema {
	s := &schema{byKey: map[string]*leaf{}, secByKey: map[string]*section{}}
	s.walk(reflect.TypeFor[Config](), "", nil)
	return s
})

// walk adds the keys and sections of struct type t. A malformed tag is a
// programmer error and panics; TestSchema builds the schema.
func (s *schema) walk(t reflect.Type, prefix string, index []int) {
	for i := range t.NumField() {
		f := t.Field(i)
		if !f.IsExported() {
			continue
		}
		name := f.Tag.Get("key")
		if name == "" || strings.ContainsAny(name, ". ") || strings.ToLower(name) != name {
			panic(fmt.Sprintf("config: field %s.%s needs a lower-case key tag without dots", t.Name(), f.Name))
		}
		doc := f.Tag.Get("doc")
		if doc == "" {
			panic(fmt.Sprintf("config: key %s%s has no doc tag", prefix, name))
		}
		key := prefix + name
		idx := append(cloneInts(index), i)
		if _, dup := s.byKey[key]; dup {
			panic("config: duplicate key " + key)
		}
		if _, dup := s.secByKey[key]; dup {
			panic("config: duplicate key " + key)
		}
		ft := f.Type
		l := &leaf{key: key, section: strings.TrimSuffix(prefix, "."), index: idx, doc: doc}
		if ft.Implements(optionalType) {
			l.optional = true
			ft = ft.Field(0).Type
		}
		switch {
		case ft.Implements(physicalType) && ft.Kind() == reflect.Float64:
			l.kind = kindQuantity
			l.dim = reflect.Zero(ft).Interface().(Physical).Dimension()
		case ft.Kind() == reflect.Float64:
			l.kind = kindNumber
		case ft.Kind() == reflect.Int:
			l.kind = kindInt
		case ft.Kind() == reflect.Bool:
			l.kind = kindBool
		case ft.Kind() == reflect.String:
			l.kind = kindText
		case ft.Kind() == reflect.Struct && !l.optional:
			sec := &section{key: key, doc: doc, index: idx}
			s.sections = append(s.sections, sec)
			s.secByKey[key] = sec
			s.items = append(s.items, item{section: sec})
			s.walk(ft, key+".", idx)
			continue
		default:
			panic(fmt.Sprintf("config: key %s has unsupported type %v", key, f.Type))
		}
		l.def = f.Tag.Get("default")
		l.fallback = f.Tag.Get("fallback")
		if l.optional != (l.def == "") || l.optional != (l.fallback != "") {
			panic(fmt.Sprintf("config: key %s: an Optional has a fallback tag and no default; any other key has a default", key))
		}
		if r := f.Tag.Get("range"); r != "" {
			rng, err := parseInterval(r)
			if err != nil {
				panic(fmt.Sprintf("config: key %s: %v", key, err))
			}
			l.rng, l.hasRange = rng, true
		}
		if e := f.Tag.Get("enum"); e != "" {
			if l.kind != kindText {
				panic("config: enum on a key that is not a string: " + key)
			}
			l.enum = strings.Split(e, "|")
		}
		l.even = f.Tag.Get("even") == "true"
		s.leaves = append(s.leaves, l)
		s.byKey[key] = l
		s.items = append(s.items, item{leaf: l})
	}
}

func cloneInts(x []int) []int { return append([]int(nil), x...) }

// interval is a valid range in SI units.
type interval struct {
	lo, hi         float64
	loOpen, hiOpen bool
}

// parseInterval reads "(0,inf)", "[0,inf)", "[4,65536]".
func parseInterval(s string) (interval, error) {
	var r interval
	s = strings.TrimSpace(s)
	if len(s) < 5 {
		return r, fmt.Errorf("bad range %q", s)
	}
	switch s[0] {
	case '(':
		r.loOpen = true
	case '[':
	default:
		return r, fmt.Errorf("bad range %q: starts with ( or [", s)
	}
	switch s[len(s)-1] {
	case ')':
		r.hiOpen = true
	case ']':
	default:
		return r, fmt.Errorf("bad range %q: ends with ) or ]", s)
	}
	lo, hi, ok := strings.Cut(s[1:len(s)-1], ",")
	if !ok {
		return r, fmt.Errorf("bad range %q: needs a comma", s)
	}
	var err error
	if r.lo, err = parseBound(lo); err != nil {
		return r, err
	}
	if r.hi, err = parseBound(hi); err != nil {
		return r, err
	}
	if !(r.lo < r.hi) {
		return r, fmt.Errorf("bad range %q: empty", s)
	}
	return r, nil
}

func parseBound(s string) (float64, error) {
	switch s = strings.TrimSpace(s); s {
	case "inf", "+inf":
		return math.Inf(1), nil
	case "-inf":
		return math.Inf(-1), nil
	}
	return strconv.ParseFloat(s, 64)
}

func (r interval) contains(x float64) bool {
	if x < r.lo || (r.loOpen && x == r.lo) {
		return false
	}
	if x > r.hi || (r.hiOpen && x == r.hi) {
		return false
	}
	return true
}

// String writes the interval for people: "> 0", "≥ 0", "[4, 65536]".
func (r interval) String() string {
	g := func(x float64) string { return strconv.FormatFloat(x, 'g', -1, 64) }
	lower := map[bool]string{true: "> ", false: "≥ "}
	upper := map[bool]string{true: "< ", false: "≤ "}
	switch {
	case math.IsInf(r.lo, -1) && math.IsInf(r.hi, 1):
		return "any finite value"
	case math.IsInf(r.hi, 1):
		return lower[r.loOpen] + g(r.lo)
	case math.IsInf(r.lo, -1):
		return upper[r.hiOpen] + g(r.hi)
	}
	open := map[bool]string{true: "(", false: "["}
	closeB := map[bool]string{true: ")", false: "]"}
	return open[r.loOpen] + g(r.lo) + ", " + g(r.hi) + closeB[r.hiOpen]
}

// unit is the SI unit of the key's values, "" if it has none.
func (l *leaf) unit() string {
	if l.kind == kindQuantity {
		return l.dim.Unit()
	}
	return ""
}

// rangeText describes the valid values without the unit.
func (l *leaf) rangeText() string {
	var parts []string
	if l.even {
		parts = append(parts, "even")
	}
	if l.hasRange {
		parts = append(parts, l.rng.String())
	}
	if l.enum != nil {
		parts = append(parts, joinBar(l.enum))
	}
	return strings.Join(parts, ", ")
}

func joinBar(s []string) string { return strings.Join(s, "|") }

// env returns the environment variable that overrides the key.
func envName(key string) string {
	return "MEMIX_" + strings.ToUpper(strings.ReplaceAll(key, ".", "_"))
}

// field returns the reflect.Value of the key's field in c.
func (l *leaf) field(c *Config) reflect.Value {
	return reflect.ValueOf(c).Elem().FieldByIndex(l.index)
}

// get returns the value of the key in c as float64, int, bool or string,
// and whether it is set (always true for a key that is not Optional).
func (l *leaf) get(c *Config) (any, bool) {
	v := l.field(c)
	if l.optional {
		if !v.Field(1).Bool() {
			return nil, false
		}
		v = v.Field(0)
	}
	switch l.kind {
	case kindQuantity, kindNumber:
		return v.Float(), true
	case kindInt:
		return int(v.Int()), true
	case kindBool:
		return v.Bool(), true
	default:
		return v.String(), true
	}
}

// set stores x (as returned by decode) in c and marks an Optional given.
func (l *leaf) set(c *Config, x any) {
	v := l.field(c)
	if l.optional {
		v.Field(1).SetBool(true)
		v = v.Field(0)
	}
	switch x := x.(type) {
	case float64:
		v.SetFloat(x)
	case int:
		v.SetInt(int64(x))
	case bool:
		v.SetBool(x)
	case string:
		v.SetString(x)
	default:
		panic(fmt.Sprintf("config: set %s to %T", l.key, x))
	}
}

// format writes a value of the key as the resolved configuration does.
func (l *leaf) format(x any) string {
	switch x := x.(type) {
	case float64:
		return FormatSI(x, l.dim)
	case int:
		return strconv.Itoa(x)
	case bool:
		return strconv.FormatBool(x)
	case string:
		return x
	}
	return fmt.Sprint(x)
}

// decode turns a value from YAML, the environment or Set (a string,
// number or bool) into the key's Go value.
func (l *leaf) decode(raw any, p Parser) (any, error) {
	switch l.kind {
	case kindQuantity, kindNumber:
		var q Quantity
		switch x := raw.(type) {
		case string:
			var err error
			if q, err = p.Parse(x); err != nil {
				return nil, err
			}
		default:
			f, ok := toFloat(raw)
			if !ok {
				return nil, fmt.Errorf("%w: expected %s, got %s", ErrSyntax, l.dim.Expect(), describeRaw(raw))
			}
			if math.IsInf(f, 0) || math.IsNaN(f) {
				return nil, fmt.Errorf("%w: infinite or NaN values are not allowed", ErrSyntax)
			}
			// A bare number is in SI units.
			q = Quantity{Value: f, Dim: l.dim}
		}
		if q.Dim != l.dim {
			return nil, fmt.Errorf("%w: expected %s; got %s", ErrDimension, l.dim.Expect(), q.Dim)
		}
		return q.Value, nil
	case kindInt:
		switch x := raw.(type) {
		case string:
			s := strings.TrimSpace(x)
			if n, err := strconv.Atoi(s); err == nil {
				return n, nil
			}
			q, err := p.Parse(s)
			switch {
			case err != nil:
				return nil, fmt.Errorf("%w: expected an integer", ErrSyntax)
			case q.Dim != Dimensionless:
				return nil, fmt.Errorf("%w: expected a plain integer (dimensionless); got %s", ErrDimension, q.Dim)
			}
			raw = q.Value
		}
		f, ok := toFloat(raw)
		if !ok {
			return nil, fmt.Errorf("%w: expected an integer, got %s", ErrSyntax, describeRaw(raw))
		}
		if f != math.Trunc(f) || math.Abs(f) > 1<<53 {
			return nil, fmt.Errorf("%w: expected an integer", ErrSyntax)
		}
		return int(f), nil
	case kindBool:
		switch x := raw.(type) {
		case bool:
			return x, nil
		case string:
			if b, err := strconv.ParseBool(strings.TrimSpace(x)); err == nil {
				return b, nil
			}
		}
		return nil, fmt.Errorf("%w: expected true or false", ErrSyntax)
	default:
		var s string
		switch x := raw.(type) {
		case string:
			s = strings.TrimSpace(x)
		case bool, int, int64, uint64, float64:
			s = fmt.Sprint(x)
		default:
			return nil, fmt.Errorf("%w: expected a word, got %s", ErrSyntax, describeRaw(raw))
		}
		for _, e := range l.enum {
			if strings.EqualFold(s, e) {
				return e, nil
			}
		}
		return s, nil // an invalid enum value is reported by validate
	}
}

// validate checks a decoded value against the key's rules. It returns an
// error wrapping ErrRange, or nil.
func (l *leaf) validate(x any) error {
	switch x := x.(type) {
	case float64:
		if math.IsInf(x, 0) || math.IsNaN(x) {
			return fmt.Errorf("%w: must be finite", ErrRange)
		}
		if l.hasRange && !l.rng.contains(x) {
			return ErrRange
		}
	case int:
		if l.hasRange && !l.rng.contains(float64(x)) {
			return ErrRange
		}
		if l.even && x%2 != 0 {
			return fmt.Errorf("%w: must be even", ErrRange)
		}
	case string:
		if l.enum != nil {
			for _, e := range l.enum {
				if x == e {
					return nil
				}
			}
			if s := closest(strings.ToLower(x), l.enum, 2); s != "" {
				return fmt.Errorf("%w: did you mean %s?", ErrRange, s)
			}
			return ErrRange
		}
	}
	return nil
}

// fieldError builds the error of a key with its unit and range filled in.
func (l *leaf) fieldError(value string, err error) *FieldError {
	return &FieldError{Key: l.key, Value: value, Unit: l.unit(), Range: l.rangeText(), Err: err}
}

func toFloat(raw any) (float64, bool) {
	v := reflect.ValueOf(raw)
	switch v.Kind() {
	case reflect.Float32, reflect.Float64:
		return v.Float(), true
	case reflect.Int, reflect.Int8, reflect.Int16, reflect.Int32, reflect.Int64:
		return float64(v.Int()), true
	case reflect.Uint, reflect.Uint8, reflect.Uint16, reflect.Uint32, reflect.Uint64:
		return float64(v.Uint()), true
	}
	return 0, false
}

func describeRaw(raw any) string {
	switch reflect.ValueOf(raw).Kind() {
	case reflect.Slice, reflect.Array:
		return "a list"
	case reflect.Map, reflect.Struct:
		return "a mapping"
	case reflect.Bool:
		return "a boolean"
	case reflect.Invalid:
		return "nothing"
	}
	return fmt.Sprintf("%T", raw)
}

// KeyInfo describes one configuration key, as the schema declares it.
type KeyInfo struct {
	Key      string // dotted name, e.g. "subphase.upper.depth"
	Section  string // dotted name of the enclosing section, "" at the top
	Env      string // environment variable that overrides it
	Type     string // quantity, number, integer, boolean or text
	Dim      Dim    // dimension of a quantity
	Unit     string // SI unit of a quantity ("" otherwise)
	Default  string // as declared ("" for an Optional)
	Fallback string // for an Optional: what applies when it is not given
	Range    string // valid values, without the unit ("" if any)
	Doc      string
	Optional bool
}

// SectionInfo describes a key group.
type SectionInfo struct {
	Key string // dotted name, e.g. "subphase.upper"
	Doc string
}

// Keys returns every configuration key in schema order.
func Keys() []KeyInfo {
	var out []KeyInfo
	for _, l := range theSchema().leaves {
		out = append(out, KeyInfo{Key: l.key, Section: l.section, Env: envName(l.key), Type: l.kind.String(),
			Dim: l.dim, Unit: l.unit(), Default: l.def, Fallback: l.fallback, Range: l.rangeText(),
			Doc: l.doc, Optional: l.optional})
	}
	return out
}

// Sections returns every key group in schema order.
func Sections() []SectionInfo {
	var out []SectionInfo
	for _, s := range theSchema().sections {
		out = append(out, SectionInfo{Key: s.key, Doc: s.doc})
	}
	return out
}
