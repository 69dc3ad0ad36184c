package scan

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"

	"go.yaml.in/yaml/v3"
)

// maxRangeN bounds the number of values one range may generate.
const maxRangeN = 100000

// A Sweep is a parsed sweep file: a base configuration and the axes that
// vary it. Build one with [LoadSweep] or [ParseSweep] and turn it into
// points with [Sweep.Points] or into a scan directory with [Expand].
type Sweep struct {
	// Text is the sweep file as written; Expand copies it into the scan.
	Text []byte
	// Dir is the folder that relative paths in the sweep are relative to.
	Dir string
	// BaseFrom is the path of the base configuration, or "" when inline.
	BaseFrom string

	base       *yaml.Node // the base configuration's mapping node
	baseText   []byte     // the base configuration as read (file) or encoded (inline)
	groups     []group
	seedKey    string
	seeds      []int64
	axisKeys   []string // varied keys in the order written, seed key last
	rangeAxes  map[string]string
	logSpacing map[string]bool
}

// A group is one factor of the product of points: its axes have equal
// lengths and are paired by position (a group of one axis is a plain axis).
type group struct {
	axes []axis
}

// An axis is one configuration key and the values it takes.
type axis struct {
	key    string
	values []*yaml.Node
}

// A Param is one varied key of a point and its value.
type Param struct {
	// Key is the dotted configuration path, e.g. "subphase.lower.depth".
	Key string `json:"key"`
	// Value is the decoded YAML value: a string (quantities such as "50 nm"
	// stay strings), a number, a bool, or for structured values a map or
	// slice.
	Value any `json:"value"`
}

// Text returns the value as it is written in tables: a scalar as written,
// anything else as compact JSON.
func (p Param) Text() string {
	switch v := p.Value.(type) {
	case string:
		return v
	case nil:
		return ""
	case float64:
		return strconv.FormatFloat(v, 'g', -1, 64)
	case int:
		return strconv.Itoa(v)
	case int64:
		return strconv.FormatInt(v, 10)
	case bool:
		return strconv.FormatBool(v)
	}
	b, err := json.Marshal(p.Value)
	if err != nil {
		return fmt.Sprint(p.Value)
	}
	return string(b)
}

// A Point is one configuration of a sweep.
type Point struct {
	// Index is the point's position in the expansion order (first axis
	// slowest, replicates fastest). It is what a Slurm array task number
	// refers to; it may change when the sweep changes, the ID does not.
	Index int `json:"index"`
	// ID is "p-" and ten hexadecimal digits of a SHA-256 hash of the
	// point's parameters (keys and canonical JSON values, sorted by key).
	// It does not depend on the index, on the other points or on the base
	// configuration, so adding a value to an axis renames no point.
	ID string `json:"id"`
	// Params are the varied keys in the sweep's axis order, the seed last.
	Params []Param `json:"params"`
}

// Param returns the value of key in the point and whether it is varied.
func (p *Point) Param(key string) (any, bool) {
	for _, q := range p.Params {
		if q.Key == key {
			return q.Value, true
		}
	}
	return nil, false
}

// Label is a short human-readable form of the parameters, "k=v, k=v",
// using the last component of each dotted key.
func (p *Point) Label() string {
	parts := make([]string, len(p.Params))
	for i, q := range p.Params {
		parts[i] = shortKey(q.Key) + "=" + q.Text()
	}
	return strings.Join(parts, ", ")
}

func shortKey(k string) string {
	if i := strings.LastIndexByte(k, '.'); i >= 0 {
		return k[i+1:]
	}
	return k
}

// LoadSweep reads and parses the sweep file at path; a base configuration
// named by a relative path is looked up beside it. conv is as for
// [ParseSweep] (nil means [LocalConverter]).
func LoadSweep(path string, conv Converter) (*Sweep, error) {
	text, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	abs, err := filepath.Abs(path)
	if err != nil {
		return nil, err
	}
	s, err := ParseSweep(text, filepath.Dir(abs), conv)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	return s, nil
}

// ParseSweep parses a sweep file's text. dir is the folder that a relative
// base path is resolved against; conv converts the ends of ranges with
// units to a common unit (nil means [LocalConverter]). Every problem found
// is reported, each naming its key.
func ParseSweep(text []byte, dir string, conv Converter) (*Sweep, error) {
	if conv == nil {
		conv = LocalConverter
	}
	var doc yaml.Node
	if err := yaml.Unmarshal(text, &doc); err != nil {
		return nil, fmt.Errorf("sweep: %w", err)
	}
	if doc.Kind != yaml.DocumentNode || len(doc.Content) != 1 || doc.Content[0].Kind != yaml.MappingNode {
		return nil, errors.New("sweep: the file must be a YAML mapping with keys base, axes, zip, mode, replicates")
	}
	s := &Sweep{Text: text, Dir: dir, rangeAxes: map[string]string{}, logSpacing: map[string]bool{}}
	top := doc.Content[0]
	var errs []error
	var axesNode, zipNode, repNode *yaml.Node
	var order []string // "axes" and "zip" in the order written
	mode := "product"
	for i := 0; i+1 < len(top.Content); i += 2 {
		k, v := top.Content[i].Value, top.Content[i+1]
		switch k {
		case "base":
			if err := s.readBase(v); err != nil {
				errs = append(errs, err)
			}
		case "mode":
			if v.Kind != yaml.ScalarNode || (v.Value != "product" && v.Value != "zip") {
				errs = append(errs, fmt.Errorf("sweep: mode %q (line %d): valid modes are product and zip", v.Value, v.Line))
			} else {
				mode = v.Value
			}
		case "axes":
			axesNode = v
			order = append(order, k)
		case "zip":
			zipNode = v
			order = append(order, k)
		case "replicates":
			repNode = v
		default:
			errs = append(errs, fmt.Errorf("sweep: unknown key %q (line %d): valid keys are base, mode, axes, zip, replicates", k, top.Content[i].Line))
		}
	}
	if s.base == nil && len(errs) == 0 {
		errs = append(errs, errors.New("sweep: key base is missing: give a configuration file path or an inline mapping"))
	}

	for _, which := range order {
		if which == "axes" {
			axes, err := s.readAxes(axesNode, "axes", conv)
			errs = append(errs, err...)
			if mode == "zip" && len(axes) > 0 {
				s.groups = append(s.groups, group{axes: axes})
			} else {
				for _, a := range axes {
					s.groups = append(s.groups, group{axes: []axis{a}})
				}
			}
			continue
		}
		if zipNode.Kind != yaml.SequenceNode {
			errs = append(errs, fmt.Errorf("sweep: zip (line %d) must be a list of mappings of axes", zipNode.Line))
			continue
		}
		for gi, g := range zipNode.Content {
			axes, err := s.readAxes(g, fmt.Sprintf("zip[%d]", gi), conv)
			errs = append(errs, err...)
			if len(axes) > 0 {
				s.groups = append(s.groups, group{axes: axes})
			}
		}
	}
	for _, g := range s.groups {
		if len(g.axes) < 2 {
			continue
		}
		n := len(g.axes[0].values)
		for _, a := range g.axes[1:] {
			if len(a.values) != n {
				errs = append(errs, fmt.Errorf("sweep: zipped axes %s (%d values) and %s (%d values) must have the same number of values",
					g.axes[0].key, n, a.key, len(a.values)))
			}
		}
	}
	if repNode != nil {
		errs = append(errs, s.readReplicates(repNode)...)
	}
	// Keys must be distinct and none may be a section containing another.
	for _, g := range s.groups {
		for _, a := range g.axes {
			s.axisKeys = append(s.axisKeys, a.key)
		}
	}
	if s.seedKey != "" {
		s.axisKeys = append(s.axisKeys, s.seedKey)
	}
	for i, a := range s.axisKeys {
		for _, b := range s.axisKeys[:i] {
			switch {
			case a == b:
				errs = append(errs, fmt.Errorf("sweep: key %s is varied twice", a))
			case strings.HasPrefix(a, b+"."), strings.HasPrefix(b, a+"."):
				errs = append(errs, fmt.Errorf("sweep: keys %s and %s overlap: one is a section containing the other", b, a))
			}
		}
	}
	if len(s.axisKeys) == 0 && len(errs) == 0 {
		errs = append(errs, errors.New("sweep: no axes: give at least one key under axes, zip or replicates"))
	}
	if len(errs) > 0 {
		return nil, errors.Join(errs...)
	}
	return s, nil
}

func (s *Sweep) readBase(v *yaml.Node) error {
	switch v.Kind {
	case yaml.ScalarNode:
		path := v.Value
		if !filepath.IsAbs(path) {
			path = filepath.Join(s.Dir, path)
		}
		text, err := os.ReadFile(path)
		if err != nil {
			return fmt.Errorf("sweep: base: %w", err)
		}
		var doc yaml.Node
		if err := yaml.Unmarshal(text, &doc); err != nil {
			return fmt.Errorf("sweep: base %s: %w", path, err)
		}
		if len(doc.Content) != 1 || doc.Content[0].Kind != yaml.MappingNode {
			return fmt.Errorf("sweep: base %s must hold one YAML mapping (a configuration)", path)
		}
		s.BaseFrom, s.base, s.baseText = path, doc.Content[0], text
	case yaml.MappingNode:
		s.base = blockStyle(cloneNode(v))
		text, err := marshalYAML(s.base)
		if err != nil {
			return fmt.Errorf("sweep: base: %w", err)
		}
		s.baseText = text
	default:
		return fmt.Errorf("sweep: base (line %d) must be a file path or an inline mapping", v.Line)
	}
	return nil
}

// readAxes reads a mapping of key → values or range.
func (s *Sweep) readAxes(n *yaml.Node, where string, conv Converter) ([]axis, []error) {
	if n.Kind != yaml.MappingNode {
		return nil, []error{fmt.Errorf("sweep: %s (line %d) must be a mapping from configuration keys to values", where, n.Line)}
	}
	var axes []axis
	var errs []error
	for i := 0; i+1 < len(n.Content); i += 2 {
		key, v := n.Content[i].Value, n.Content[i+1]
		if err := checkKey(key); err != nil {
			errs = append(errs, fmt.Errorf("sweep: %s: %w", where, err))
			continue
		}
		vals, err := s.readValues(key, v, conv)
		if err != nil {
			errs = append(errs, fmt.Errorf("sweep: %s: %w", where, err))
			continue
		}
		axes = append(axes, axis{key: key, values: vals})
	}
	return axes, errs
}

func checkKey(key string) error {
	if key == "" {
		return errors.New("empty key")
	}
	for _, part := range strings.Split(key, ".") {
		if part == "" || strings.TrimSpace(part) != part {
			return fmt.Errorf("key %q: a dotted path needs non-empty parts without surrounding spaces", key)
		}
	}
	return nil
}

// readValues reads an axis: a list of values, or {lin|log: [a, b], n: N}.
func (s *Sweep) readValues(key string, v *yaml.Node, conv Converter) ([]*yaml.Node, error) {
	switch v.Kind {
	case yaml.SequenceNode:
		if len(v.Content) == 0 {
			return nil, fmt.Errorf("key %s (line %d): the list of values is empty", key, v.Line)
		}
		return v.Content, nil
	case yaml.MappingNode:
		return s.readRange(key, v, conv)
	}
	return nil, fmt.Errorf("key %s (line %d): give a list of values [a, b, ...] or a range {lin: [a, b], n: N} or {log: [a, b], n: N}", key, v.Line)
}

func (s *Sweep) readRange(key string, v *yaml.Node, conv Converter) ([]*yaml.Node, error) {
	var kind string
	var ends *yaml.Node
	n := -1
	for i := 0; i+1 < len(v.Content); i += 2 {
		k, val := v.Content[i].Value, v.Content[i+1]
		switch k {
		case "lin", "log":
			if kind != "" {
				return nil, fmt.Errorf("key %s (line %d): give one of lin and log", key, v.Line)
			}
			kind, ends = k, val
		case "n":
			m, err := strconv.Atoi(val.Value)
			if err != nil || val.Kind != yaml.ScalarNode || m < 2 || m > maxRangeN {
				return nil, fmt.Errorf("key %s: range n = %q: need a whole number of values from 2 to %d", key, val.Value, maxRangeN)
			}
			n = m
		default:
			return nil, fmt.Errorf("key %s: unknown range key %q (valid: lin, log, n)", key, k)
		}
	}
	if kind == "" || n < 0 {
		return nil, fmt.Errorf("key %s (line %d): a range needs lin or log, and n", key, v.Line)
	}
	if ends.Kind != yaml.SequenceNode || len(ends.Content) != 2 ||
		ends.Content[0].Kind != yaml.ScalarNode || ends.Content[1].Kind != yaml.ScalarNode {
		return nil, fmt.Errorf("key %s: %s needs two ends [first, last], e.g. [50 nm, 50 um]", key, kind)
	}
	first, last := ends.Content[0].Value, ends.Content[1].Value
	a, unit, err := splitQuantity(first)
	if err != nil {
		return nil, fmt.Errorf("key %s: range start: %w", key, err)
	}
	b, err := conv(last, unit)
	if err != nil {
		return nil, fmt.Errorf("key %s: range end %q in the unit of the start %q: %w", key, last, first, err)
	}
	if math.IsNaN(a) || math.IsInf(a, 0) || math.IsNaN(b) || math.IsInf(b, 0) {
		return nil, fmt.Errorf("key %s: range ends %q and %q must be finite", key, first, last)
	}
	if kind == "log" && (a <= 0 || b <= 0) {
		return nil, fmt.Errorf("key %s: log range [%s, %s]: both ends must be positive", key, first, last)
	}
	vals := make([]*yaml.Node, n)
	for i := range vals {
		t := float64(i) / float64(n-1)
		var x float64
		switch {
		case i == 0:
			x = a
		case i == n-1:
			x = b
		case kind == "lin":
			x = a + (b-a)*t
		default:
			x = a * math.Pow(b/a, t)
		}
		vals[i] = scalarNode(formatQuantity(x, unit), unit != "")
	}
	s.rangeAxes[key] = unit
	s.logSpacing[key] = kind == "log"
	return vals, nil
}

// scalarNode makes a plain scalar; str forces a string, otherwise the YAML
// resolution rules pick int or float.
func scalarNode(text string, str bool) *yaml.Node {
	n := &yaml.Node{Kind: yaml.ScalarNode, Value: text}
	if str {
		n.Tag = "!!str"
	} else if _, err := strconv.ParseInt(text, 10, 64); err == nil {
		n.Tag = "!!int"
	} else {
		n.Tag = "!!float"
	}
	return n
}

func (s *Sweep) readReplicates(v *yaml.Node) []error {
	if v.Kind != yaml.MappingNode {
		return []error{fmt.Errorf("sweep: replicates (line %d) must be a mapping {n: N, key: K, first: S} or {key: K, seeds: [...]}", v.Line)}
	}
	n, first := 0, int64(1)
	hasFirst := false
	var errs []error
	for i := 0; i+1 < len(v.Content); i += 2 {
		k, val := v.Content[i].Value, v.Content[i+1]
		switch k {
		case "n":
			m, err := strconv.Atoi(val.Value)
			if err != nil || m < 1 || m > maxRangeN {
				errs = append(errs, fmt.Errorf("sweep: replicates.n = %q: need a whole number from 1 to %d", val.Value, maxRangeN))
			}
			n = m
		case "key":
			if err := checkKey(val.Value); err != nil {
				errs = append(errs, fmt.Errorf("sweep: replicates.key: %w", err))
			}
			s.seedKey = val.Value
		case "first":
			f, err := strconv.ParseInt(val.Value, 10, 64)
			if err != nil {
				errs = append(errs, fmt.Errorf("sweep: replicates.first = %q: need a whole number", val.Value))
			}
			first, hasFirst = f, true
		case "seeds":
			if val.Kind != yaml.SequenceNode || len(val.Content) == 0 {
				errs = append(errs, errors.New("sweep: replicates.seeds must be a non-empty list of whole numbers"))
				continue
			}
			seen := map[int64]bool{}
			for _, e := range val.Content {
				f, err := strconv.ParseInt(e.Value, 10, 64)
				if err != nil {
					errs = append(errs, fmt.Errorf("sweep: replicates.seeds: %q is not a whole number", e.Value))
					continue
				}
				if seen[f] {
					errs = append(errs, fmt.Errorf("sweep: replicates.seeds: seed %d appears twice; replicates need distinct seeds", f))
				}
				seen[f] = true
				s.seeds = append(s.seeds, f)
			}
		default:
			errs = append(errs, fmt.Errorf("sweep: replicates: unknown key %q (valid: n, key, first, seeds)", k))
		}
	}
	if s.seedKey == "" {
		errs = append(errs, errors.New("sweep: replicates.key is missing: name the configuration key of the random seed"))
	}
	switch {
	case s.seeds != nil && (n != 0 || hasFirst):
		errs = append(errs, errors.New("sweep: replicates: give either seeds or n (with an optional first), not both"))
	case s.seeds == nil && n == 0:
		errs = append(errs, errors.New("sweep: replicates: give n (number of replicates) or seeds"))
	case s.seeds == nil:
		for i := 0; i < n; i++ {
			s.seeds = append(s.seeds, first+int64(i))
		}
	}
	return errs
}

// AxisKeys returns the varied keys in sweep order, the seed key last.
func (s *Sweep) AxisKeys() []string { return append([]string(nil), s.axisKeys...) }

// SeedKey returns the replicate seed key, or "" without replicates.
func (s *Sweep) SeedKey() string { return s.seedKey }

// A PointConfig is a point with its resolved configuration.
type PointConfig struct {
	Point
	// Config is the base configuration with the point's values set, as YAML.
	Config []byte
}

// Points expands the sweep: the product of its groups in order (the first
// group varies slowest), then the replicates (fastest). It returns an error
// if two points would get the same identifier.
func (s *Sweep) Points() ([]PointConfig, error) {
	type factor struct {
		n    int
		axes []axis
	}
	var factors []factor
	for _, g := range s.groups {
		factors = append(factors, factor{len(g.axes[0].values), g.axes})
	}
	if s.seedKey != "" {
		vals := make([]*yaml.Node, len(s.seeds))
		for i, v := range s.seeds {
			vals[i] = scalarNode(strconv.FormatInt(v, 10), false)
		}
		factors = append(factors, factor{len(vals), []axis{{s.seedKey, vals}}})
	}
	total := 1
	for _, f := range factors {
		total *= f.n
		if total > 10*maxRangeN {
			return nil, fmt.Errorf("sweep: more than %d points", 10*maxRangeN)
		}
	}
	out := make([]PointConfig, 0, total)
	seen := map[string]int{}
	idx := make([]int, len(factors))
	for p := 0; p < total; p++ {
		// Mixed-radix digits, last factor fastest.
		r := p
		for i := len(factors) - 1; i >= 0; i-- {
			idx[i] = r % factors[i].n
			r /= factors[i].n
		}
		cfg := cloneNode(s.base)
		var params []Param
		for i, f := range factors {
			for _, a := range f.axes {
				v := a.values[idx[i]]
				if err := setKey(cfg, a.key, cloneNode(v)); err != nil {
					return nil, fmt.Errorf("sweep: %w", err)
				}
				var val any
				if err := v.Decode(&val); err != nil {
					return nil, fmt.Errorf("sweep: key %s value %q: %w", a.key, v.Value, err)
				}
				params = append(params, Param{Key: a.key, Value: normalise(val)})
			}
		}
		id, err := pointID(params)
		if err != nil {
			return nil, err
		}
		if q, dup := seen[id]; dup {
			return nil, fmt.Errorf("sweep: points %d and %d have the same parameters (%s); an axis repeats a value", q, p, (&Point{Params: params}).Label())
		}
		seen[id] = p
		text, err := marshalYAML(cfg)
		if err != nil {
			return nil, fmt.Errorf("sweep: point %s: %w", id, err)
		}
		out = append(out, PointConfig{Point: Point{Index: p, ID: id, Params: params}, Config: text})
	}
	return out, nil
}

// normalise turns YAML-decoded values into their JSON-decoded form
// (map[string]any, float64 numbers) so that a point read back from
// points.json compares equal and hashes the same.
func normalise(v any) any {
	b, err := json.Marshal(v)
	if err != nil {
		return v
	}
	var out any
	if err := json.Unmarshal(b, &out); err != nil {
		return v
	}
	return out
}

// pointID hashes the sorted key=canonical-JSON pairs.
func pointID(params []Param) (string, error) {
	ps := append([]Param(nil), params...)
	sort.Slice(ps, func(i, j int) bool { return ps[i].Key < ps[j].Key })
	h := sha256.New()
	for _, p := range ps {
		b, err := json.Marshal(p.Value)
		if err != nil {
			return "", fmt.Errorf("sweep: key %s: %w", p.Key, err)
		}
		fmt.Fprintf(h, "%s\x00%s\n", p.Key, b)
	}
	return "p-" + hex.EncodeToString(h.Sum(nil))[:10], nil
}

// marshalYAML encodes a node with two-space indentation.
func marshalYAML(n *yaml.Node) ([]byte, error) {
	var b bytes.Buffer
	enc := yaml.NewEncoder(&b)
	enc.SetIndent(2)
	if err := enc.Encode(n); err != nil {
		return nil, err
	}
	if err := enc.Close(); err != nil {
		return nil, err
	}
	return b.Bytes(), nil
}

// blockStyle writes an inline base out in block style, like a config file.
func blockStyle(n *yaml.Node) *yaml.Node {
	if n.Kind == yaml.MappingNode {
		n.Style &^= yaml.FlowStyle
	}
	for _, c := range n.Content {
		blockStyle(c)
	}
	return n
}

func cloneNode(n *yaml.Node) *yaml.Node {
	if n == nil {
		return nil
	}
	c := *n
	if n.Content != nil {
		c.Content = make([]*yaml.Node, len(n.Content))
		for i, e := range n.Content {
			c.Content[i] = cloneNode(e)
		}
	}
	return &c
}

// setKey sets the dotted key in the mapping m to v, creating sections
// that the base does not have.
func setKey(m *yaml.Node, key string, v *yaml.Node) error {
	parts := strings.Split(key, ".")
	cur := m
	for i, part := range parts {
		if cur.Kind == yaml.AliasNode {
			cur = cur.Alias
		}
		if cur.Kind != yaml.MappingNode {
			return fmt.Errorf("key %s: the base has a value, not a section, at %s", key, strings.Join(parts[:i], "."))
		}
		var next *yaml.Node
		for j := 0; j+1 < len(cur.Content); j += 2 {
			if cur.Content[j].Value == part {
				if i == len(parts)-1 {
					cur.Content[j+1] = v
					return nil
				}
				next = cur.Content[j+1]
				break
			}
		}
		if next == nil {
			k := &yaml.Node{Kind: yaml.ScalarNode, Tag: "!!str", Value: part}
			if i == len(parts)-1 {
				cur.Content = append(cur.Content, k, v)
				return nil
			}
			next = &yaml.Node{Kind: yaml.MappingNode, Tag: "!!map"}
			cur.Content = append(cur.Content, k, next)
		}
		cur = next
	}
	return nil
}
