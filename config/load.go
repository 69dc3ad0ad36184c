package config

import (
	"bytes"
	"errors"
	"fmt"
	"maps"
	"os"
	"reflect"
	"slices"
	"strings"

	"github.com/spf13/viper"
)

// Source tells where the value of a key came from.
type Source int

const (
	FromDefault Source = iota // the schema default (or the key is unset)
	FromFile                  // the configuration file
	FromEnv                   // an environment variable MEMIX_…
	FromSet                   // Config.Set, e.g. a parameter sweep
	Derived                   // filled in by Resolved from other keys
)

func (s Source) String() string {
	switch s {
	case FromDefault:
		return "default"
	case FromFile:
		return "file"
	case FromEnv:
		return "environment"
	case FromSet:
		return "set"
	case Derived:
		return "derived"
	}
	return fmt.Sprintf("Source(%d)", int(s))
}

// meta is the provenance of a Config: the values given for each key, as
// given, and where they came from. It is never modified once a Config
// holds it; Set and Resolved make a new one.
type meta struct {
	file    string
	raw     map[string]any
	sources map[string]Source
}

func (m *meta) clone() *meta {
	n := &meta{raw: map[string]any{}, sources: map[string]Source{}}
	if m != nil {
		n.file = m.file
		maps.Copy(n.raw, m.raw)
		maps.Copy(n.sources, m.sources)
	}
	return n
}

// Default returns the configuration with every key at its default.
func Default() Config {
	c, err := build(&meta{}, nil)
	if err != nil {
		panic("config: the defaults are invalid: " + err.Error()) // TestDefaultsValid
	}
	return c
}

// Load reads the YAML configuration file at path, applies the
// environment overrides (MEMIX_ followed by the key in upper case with
// dots as underscores, e.g. MEMIX_MEMBRANE_VISCOSITY) and validates the
// result. On bad input it returns every problem at once, joined with
// errors.Join: FieldErrors naming key, value, unit and valid range, or a
// FileError if the file cannot be read or parsed.
func Load(path string) (Config, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return Config{}, &FileError{Path: path, Err: err}
	}
	return Parse(data, path)
}

// Parse is Load for YAML already in memory; name stands for the file in
// messages.
func Parse(data []byte, name string) (Config, error) {
	v := viper.New()
	v.SetConfigType("yaml")
	v.SetEnvPrefix("MEMIX")
	v.SetEnvKeyReplacer(strings.NewReplacer(".", "_"))
	s := theSchema()
	for _, l := range s.leaves {
		if err := v.BindEnv(l.key); err != nil {
			panic(err) // only for an empty key
		}
	}
	if err := v.ReadConfig(bytes.NewReader(data)); err != nil {
		return Config{}, &FileError{Path: name, Err: err}
	}
	m := &meta{file: name, raw: map[string]any{}, sources: map[string]Source{}}
	for _, k := range v.AllKeys() {
		if !v.IsSet(k) {
			continue
		}
		val := v.Get(k)
		if _, ok := s.secByKey[k]; ok && isEmpty(val) {
			continue // "membrane:" with nothing under it
		}
		if val == nil {
			continue // "depth:" or "depth: ~" leaves the key unset
		}
		m.raw[k] = val
		m.sources[k] = FromFile
		if os.Getenv(envName(k)) != "" {
			m.sources[k] = FromEnv // viper prefers the environment to the file
		}
	}
	return build(m, envTypos())
}

func isEmpty(x any) bool {
	if x == nil {
		return true
	}
	v := reflect.ValueOf(x)
	return v.Kind() == reflect.Map && v.Len() == 0
}

// envTypos reports MEMIX_ variables within two edits of a key's variable
// that match none: a misspelt override would otherwise be ignored
// silently. Variables further from every key are left alone; they may
// belong to other parts of memix.
func envTypos() []error {
	var names []string
	for _, l := range theSchema().leaves {
		names = append(names, envName(l.key))
	}
	var errs []error
	for _, kv := range os.Environ() {
		name, val, _ := strings.Cut(kv, "=")
		if !strings.HasPrefix(name, "MEMIX_") || slices.Contains(names, name) {
			continue
		}
		if s := closest(name, names, 2); s != "" {
			errs = append(errs, &FieldError{Key: name, Value: val, Suggest: s,
				Err: fmt.Errorf("%w: no key has this environment variable; did you mean %s?", ErrUnknownKey, s)})
		}
	}
	return errs
}

// Set returns a copy of c with key set to value, given as in a
// configuration file: a string with a unit ("200 nm"), a number (SI), a
// bool or a word. Every key is decoded again, so that a value in kT
// follows a new temperature. The error lists every problem of the new
// configuration, as Load does.
func (c Config) Set(key string, value any) (Config, error) {
	return c.SetAll([][2]string{{key, fmt.Sprint(value)}})
}

// SetAll is Set for several keys at once: the values are applied together
// and validated once, so keys that depend on each other (initial.lipids =
// file with initial.file) can change together.
func (c Config) SetAll(kv [][2]string) (Config, error) {
	m := c.meta.clone()
	for _, p := range kv {
		key := strings.ToLower(strings.TrimSpace(p[0]))
		m.raw[key] = p[1]
		m.sources[key] = FromSet
	}
	return build(m, nil)
}

// Source tells where the value of key came from.
func (c Config) Source(key string) Source {
	if c.meta == nil {
		return FromDefault
	}
	return c.meta.sources[key]
}

// File returns the file the configuration was loaded from, "" if none.
func (c Config) File() string {
	if c.meta == nil {
		return ""
	}
	return c.meta.file
}

// build decodes the given values over the defaults and validates the
// result. pre holds problems found before (unknown environment variables).
func build(m *meta, pre []error) (Config, error) {
	if m.raw == nil {
		m.raw, m.sources = map[string]any{}, map[string]Source{}
	}
	s := theSchema()
	c := Config{meta: m}
	errs := pre
	bad := map[string]bool{}

	// Keys that are not in the schema.
	var unknown []string
	for k := range m.raw {
		if _, ok := s.byKey[k]; !ok {
			unknown = append(unknown, k)
		}
	}
	slices.Sort(unknown)
	for _, k := range unknown {
		errs = append(errs, unknownKey(s, k, m.raw[k]))
	}

	assign := func(l *leaf, p Parser) {
		raw, given := m.raw[l.key]
		if given {
			x, err := l.decode(raw, p)
			if err == nil {
				l.set(&c, x)
				return
			}
			errs = append(errs, l.fieldError(rawText(raw), err))
			bad[l.key] = true
		}
		if !l.optional {
			x, err := l.decode(l.def, p)
			if err != nil {
				panic(fmt.Sprintf("config: default of %s: %v", l.key, err)) // TestDefaultsValid
			}
			l.set(&c, x)
		}
	}
	// The temperature first: it is the value of the unit kT.
	tl := s.byKey["temperature"]
	assign(tl, Parser{})
	kT := Boltzmann * float64(c.Temperature)
	if bad[tl.key] || tl.validate(float64(c.Temperature)) != nil {
		def, _ := tl.decode(tl.def, Parser{})
		kT = Boltzmann * def.(float64) // decode the rest as well as possible
	}
	for _, l := range s.leaves {
		if l != tl {
			assign(l, Parser{KT: kT})
		}
	}
	errs = append(errs, c.validate(bad)...)
	return c, errors.Join(errs...)
}

// unknownKey describes a key that is not in the schema, with the closest
// known key.
func unknownKey(s *schema, k string, raw any) *FieldError {
	if _, ok := s.secByKey[k]; ok {
		var subs []string
		for _, l := range s.leaves {
			if l.section == k {
				subs = append(subs, strings.TrimPrefix(l.key, k+"."))
			}
		}
		for _, sec := range s.sections {
			if p, name, ok := strings.Cut(sec.key, "."); ok && p == k && !strings.Contains(name, ".") {
				subs = append(subs, name)
			}
		}
		return &FieldError{Key: k, Value: rawText(raw),
			Err: fmt.Errorf("%w: %s is a key group; write its keys (%s) under it", ErrSyntax, k, strings.Join(subs, ", "))}
	}
	var cands []string
	for _, l := range s.leaves {
		cands = append(cands, l.key)
	}
	maxDist := max(2, len([]rune(k))/3)
	sug := closest(k, cands, maxDist)
	if sug == "" {
		// Same last name in another section: "viscosity" → "membrane.viscosity".
		last := k[strings.LastIndex(k, ".")+1:]
		for _, c := range cands {
			if strings.HasSuffix(c, "."+last) || c == last {
				sug = c
				break
			}
		}
	}
	err := fmt.Errorf("%w", ErrUnknownKey)
	if sug != "" {
		err = fmt.Errorf("%w; did you mean %s?", ErrUnknownKey, sug)
	}
	return &FieldError{Key: k, Value: rawText(raw), Suggest: sug, Err: err}
}

func rawText(raw any) string {
	switch x := raw.(type) {
	case string:
		return x
	case nil:
		return ""
	case map[string]any, []any:
		return describeRaw(raw)
	}
	return fmt.Sprint(raw)
}

// Validate checks every key against its range and the rules across keys
// (a depth only on a wall or slip side, an FFT backend compiled in, …).
// It returns every problem at once, joined with errors.Join; each is a
// *FieldError naming key, value, unit and valid range (see Problems).
func (c Config) Validate() error { return errors.Join(c.validate(nil)...) }

func (c Config) validate(skip map[string]bool) []error {
	s := theSchema()
	var errs []error
	for _, l := range s.leaves {
		if skip[l.key] {
			continue
		}
		x, ok := l.get(&c)
		if !ok {
			continue
		}
		if err := l.validate(x); err != nil {
			errs = append(errs, l.fieldError(c.valueText(l, x), err))
		}
	}
	report := func(e *FieldError) {
		if !skip[e.Key] {
			errs = append(errs, e)
		}
	}
	root := reflect.ValueOf(&c).Elem()
	for _, sec := range s.sections {
		if ch, ok := root.FieldByIndex(sec.index).Interface().(sectionChecker); ok {
			ch.check(sec.key, &c, report)
		}
	}
	return errs
}

// valueText is the value of a key for messages: as given, else formatted.
func (c Config) valueText(l *leaf, x any) string {
	if c.meta != nil {
		if raw, ok := c.meta.raw[l.key]; ok {
			return rawText(raw)
		}
	}
	return l.format(x)
}

// Value returns the value of key as the resolved configuration writes it
// ("1e-09 Pa*s*m", "128", "deep"), and false if the key is unknown or,
// being optional, not set. Keys with a fallback derived from other keys
// are reported as set only in a Resolved configuration.
func (c Config) Value(key string) (string, bool) {
	l, ok := theSchema().byKey[key]
	if !ok {
		return "", false
	}
	x, ok := l.get(&c)
	if !ok {
		return "", false
	}
	return l.format(x), true
}
