package config

import (
	"bufio"
	"io"
	"strings"
)

// WriteReference writes the Markdown reference of every configuration key
// (docs/config.md): key, SI unit, default, valid values, environment
// variable and description, generated from the schema.
func WriteReference(w io.Writer) error {
	bw := bufio.NewWriter(w)
	p := func(s ...string) {
		for _, x := range s {
			bw.WriteString(x)
		}
		bw.WriteString("\n")
	}
	p("# memix configuration reference")
	p()
	p("<!-- Generated from the schema in config/config.go by `go test ./config -run TestReference -update`. Do not edit by hand. -->")
	p()
	p("memix reads one YAML file of the keys below. Every key is optional: a missing key takes its default, and `memix check FILE` lists every problem of a file at once. `config.resolved.yaml` in an output directory records every key with defaults filled in.")
	p()
	p("## Values")
	p()
	p("- A quantity is a number and a unit: `200 nm`, `0.89 mPa*s`, `1e-9 Pa*s*m`, `500 um^-2`, `1 um^2/s`, `40 kT`. A bare number is in SI units (m, kg, s, K and their products).")
	p("- Units: m, g, s, K, min, h, Hz, N, Pa, J, W, P (poise, 0.1 Pa·s), sP (surface poise, 1e-3 Pa·s·m), dyn, erg, eV, Å, kT (also kBT, k_BT: k_B times the configured `temperature`), rad, deg, %; SI prefixes from y to Y, micro as `u`, `µ` or `μ`.")
	p("- Combine units with `*`, `·` or a space, divide with `/`, raise with `^2`, `^-1` or superscripts (`µm⁻²`), group with parentheses: `kg/(m*s)`. A product after a division (`kg/m*s`) is ambiguous and rejected.")
	p("- A value of the wrong dimension is an error that says what was expected and what was given.")
	p("- Every key can be overridden by an environment variable: `MEMIX_` followed by the key in upper case with dots as underscores, e.g. `MEMIX_MEMBRANE_VISCOSITY=\"2e-9 Pa*s*m\"`.")
	p()
	p("## Keys")
	s := theSchema()
	// A table per group of keys that share a section, in schema order.
	var open string
	inTable := false
	for _, it := range s.items {
		if it.section != nil {
			depth := strings.Count(it.section.key, ".")
			p()
			p(strings.Repeat("#", 3+min(depth, 1)), " ", it.section.key)
			p()
			p(it.section.doc)
			open, inTable = it.section.key, false
			continue
		}
		l := it.leaf
		if l.section != open || !inTable {
			if l.section != open {
				p()
				p("### (top level)")
				open = l.section
			}
			p()
			p("| key | unit | default | valid | environment | description |")
			p("|---|---|---|---|---|---|")
			inTable = true
		}
		def := "`" + l.def + "`"
		if l.optional {
			def = l.fallback
		}
		unit := l.unit()
		if l.kind != kindQuantity {
			unit = l.kind.String()
		}
		p("| `", l.key, "` | ", cell(unit), " | ", cell(def), " | ", cell(l.rangeText()), " | `", envName(l.key), "` | ", cell(l.doc), " |")
	}
	return bw.Flush()
}

// cell escapes text for a Markdown table cell.
func cell(s string) string { return strings.ReplaceAll(s, "|", `\|`) }
