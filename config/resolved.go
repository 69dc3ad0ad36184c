package config

import (
	"bufio"
	"io"
	"strconv"
	"strings"
)

// WriteResolved writes c.Resolved() as YAML: every key in schema order,
// defaults and derived values filled in, quantities in SI units (the
// shortest text that parses back to the same float64, so that loading the
// file reproduces c bit for bit). A comment after each value gives it in a
// readable unit where that differs, and where it came from. header lines,
// if any, are written first as comments. This is config.resolved.yaml of
// an output directory.
func (c Config) WriteResolved(w io.Writer, header ...string) error {
	r := c.Resolved()
	bw := bufio.NewWriter(w)
	for _, h := range header {
		bw.WriteString("# " + h + "\n")
	}
	bw.WriteString("# memix configuration: every key, defaults filled in, values in SI units.\n")
	if f := c.File(); f != "" {
		bw.WriteString("# Read from " + f + ".\n")
	}
	for _, it := range theSchema().items {
		key := it.key()
		depth := strings.Count(key, ".")
		indent := strings.Repeat("  ", depth)
		name := key[strings.LastIndex(key, ".")+1:]
		if it.section != nil {
			if depth == 0 {
				bw.WriteString("\n")
			}
			bw.WriteString(indent + name + ":\n")
			continue
		}
		l := it.leaf
		x, ok := l.get(&r)
		if !ok {
			bw.WriteString(indent + "# " + name + ": not set (" + l.fallback + ")\n")
			continue
		}
		var notes []string
		if f, isF := x.(float64); isF && l.kind == kindQuantity {
			if h, si := humanForm(f, l.dim); si != 1 {
				notes = append(notes, h)
			}
		}
		switch src := r.Source(key); src {
		case FromEnv:
			notes = append(notes, "from "+envName(key))
		case Derived:
			notes = append(notes, "derived: "+l.fallback)
		case FromFile:
		default:
			notes = append(notes, src.String())
		}
		line := indent + name + ": " + yamlScalar(l, l.format(x))
		if len(notes) > 0 {
			line += "  # " + strings.Join(notes, "; ")
		}
		bw.WriteString(line + "\n")
	}
	return bw.Flush()
}

func (it item) key() string {
	if it.leaf != nil {
		return it.leaf.key
	}
	return it.section.key
}

// yamlScalar quotes free text that YAML would not read back as written.
func yamlScalar(l *leaf, s string) string {
	if l.kind != kindText || l.enum != nil {
		return s // numbers with units, words from a list, integers, booleans
	}
	for _, r := range s {
		if !(r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || r >= '0' && r <= '9' || strings.ContainsRune("._/-", r)) {
			return strconv.Quote(s)
		}
	}
	if s == "" || s == "true" || s == "false" || s == "null" || s == "~" {
		return strconv.Quote(s)
	}
	return s
}
