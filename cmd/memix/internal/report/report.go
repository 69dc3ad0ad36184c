package report

import (
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"text/tabwriter"

	"github.com/spf13/pflag"
)

// Format is an output format.
type Format int

const (
	Text Format = iota
	JSON
	CSV
)

func (f Format) String() string {
	switch f {
	case Text:
		return "text"
	case JSON:
		return "json"
	case CSV:
		return "csv"
	}
	return fmt.Sprintf("Format(%d)", int(f))
}

// ErrFormat is returned by Flags.Format when both --json and --csv are
// given.
var ErrFormat = errors.New("--json and --csv exclude each other")

// Flags holds the --json and --csv flags of a command.
type Flags struct {
	json, csv bool
}

// Bind adds --json and --csv to fs.
func (f *Flags) Bind(fs *pflag.FlagSet) {
	fs.BoolVar(&f.json, "json", false, "print JSON for scripts")
	fs.BoolVar(&f.csv, "csv", false, "print CSV for scripts")
}

// Format returns the format the flags select: Text by default.
func (f *Flags) Format() (Format, error) {
	switch {
	case f.json && f.csv:
		return Text, ErrFormat
	case f.json:
		return JSON, nil
	case f.csv:
		return CSV, nil
	}
	return Text, nil
}

// Cell is a value with a separate text for people: Text output shows
// Text, JSON and CSV get Value.
type Cell struct {
	Value any
	Text  string
}

// Field is a named value printed before the tables.
type Field struct {
	Key   string // name in JSON and CSV
	Title string // label in text; Key if empty
	Value any    // float64, int, string, bool, []string, nil, or a Cell
}

// Column is a column of a table.
type Column struct {
	Key   string // name in JSON and CSV, snake_case
	Title string // header in text; Key if empty
	Unit  string // unit of the column's numbers in JSON and CSV, "" if none
	// TextUnitInCells drops Unit from the text header because the
	// column's cells are Cells whose text carries its own unit
	// ("561.8 nm" over a column of metres).
	TextUnitInCells bool
}

// Table is a table of values. Every row has one cell per column: float64,
// int, string, bool, nil (no value) or a Cell.
type Table struct {
	Key     string // name in JSON and CSV
	Title   string // heading in text; none if empty
	Columns []Column
	Rows    [][]any
	Notes   []string // lines printed after the table in text only
}

// Doc is everything one command prints.
type Doc struct {
	Fields []Field
	Tables []*Table
}

// Write writes d to w in format f. A row whose length differs from its
// table's columns, or two members with one key, is a programmer error and
// panics.
func Write(w io.Writer, f Format, d Doc) error {
	seen := map[string]bool{}
	for _, fd := range d.Fields {
		mustUnique(seen, fd.Key)
	}
	for _, t := range d.Tables {
		mustUnique(seen, t.Key)
		for i, r := range t.Rows {
			if len(r) != len(t.Columns) {
				panic(fmt.Sprintf("report: table %s row %d has %d cells for %d columns", t.Key, i, len(r), len(t.Columns)))
			}
		}
	}
	switch f {
	case JSON:
		return writeJSON(w, d)
	case CSV:
		return writeCSV(w, d)
	}
	return writeText(w, d)
}

func mustUnique(seen map[string]bool, k string) {
	if k == "" || seen[k] {
		panic(fmt.Sprintf("report: empty or repeated key %q", k))
	}
	seen[k] = true
}

// machine returns the value JSON and CSV print.
func machine(v any) any {
	if c, ok := v.(Cell); ok {
		v = c.Value
	}
	if x, ok := v.(float64); ok && (math.IsInf(x, 0) || math.IsNaN(x)) {
		return nil
	}
	return v
}

// human returns the text a person sees.
func human(v any) string {
	switch x := v.(type) {
	case Cell:
		return x.Text
	case nil:
		return "–"
	case float64:
		return FormatFloat(x)
	case []string:
		return strings.Join(x, ", ")
	}
	return fmt.Sprint(v)
}

// FormatFloat writes x with four significant digits, "∞" for infinity.
func FormatFloat(x float64) string {
	switch {
	case math.IsInf(x, 1):
		return "∞"
	case math.IsInf(x, -1):
		return "−∞"
	case math.IsNaN(x):
		return "NaN"
	}
	return strconv.FormatFloat(x, 'g', 4, 64)
}

func title(t, key string) string {
	if t != "" {
		return t
	}
	return key
}

func writeText(w io.Writer, d Doc) error {
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	for _, f := range d.Fields {
		fmt.Fprintf(tw, "%s:\t%s\n", title(f.Title, f.Key), human(f.Value))
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	for i, t := range d.Tables {
		if i > 0 || len(d.Fields) > 0 {
			fmt.Fprintln(w)
		}
		if t.Title != "" {
			fmt.Fprintln(w, t.Title)
		}
		tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
		var head []string
		for _, c := range t.Columns {
			h := title(c.Title, c.Key)
			if c.Unit != "" && !c.TextUnitInCells {
				h += " [" + c.Unit + "]"
			}
			head = append(head, h)
		}
		fmt.Fprintln(tw, strings.Join(head, "\t"))
		for _, r := range t.Rows {
			cells := make([]string, len(r))
			for j, v := range r {
				cells[j] = human(v)
			}
			fmt.Fprintln(tw, strings.Join(cells, "\t"))
		}
		if err := tw.Flush(); err != nil {
			return err
		}
		for _, n := range t.Notes {
			fmt.Fprintln(w, n)
		}
	}
	return nil
}

// object is a JSON object that keeps its members in order.
type object []member

type member struct {
	key   string
	value any
}

func (o object) MarshalJSON() ([]byte, error) {
	var b strings.Builder
	b.WriteByte('{')
	for i, m := range o {
		if i > 0 {
			b.WriteByte(',')
		}
		k, _ := json.Marshal(m.key)
		v, err := json.Marshal(m.value)
		if err != nil {
			return nil, fmt.Errorf("report: %s: %w", m.key, err)
		}
		b.Write(k)
		b.WriteByte(':')
		b.Write(v)
	}
	b.WriteByte('}')
	return []byte(b.String()), nil
}

func writeJSON(w io.Writer, d Doc) error {
	var doc object
	for _, f := range d.Fields {
		doc = append(doc, member{f.Key, machine(f.Value)})
	}
	for _, t := range d.Tables {
		var cols []object
		for _, c := range t.Columns {
			cols = append(cols, object{{"key", c.Key}, {"unit", c.Unit}})
		}
		rows := []object{}
		for _, r := range t.Rows {
			var row object
			for j, v := range r {
				row = append(row, member{t.Columns[j].Key, machine(v)})
			}
			rows = append(rows, row)
		}
		doc = append(doc, member{t.Key, object{{"title", t.Title}, {"columns", cols}, {"rows", rows}}})
	}
	b, err := json.MarshalIndent(doc, "", "  ")
	if err != nil {
		return err
	}
	_, err = w.Write(append(b, '\n'))
	return err
}

func csvText(v any) string {
	switch x := machine(v).(type) {
	case nil:
		return ""
	case float64:
		return strconv.FormatFloat(x, 'g', -1, 64)
	case []string:
		return strings.Join(x, " ")
	default:
		return fmt.Sprint(x)
	}
}

func writeCSV(w io.Writer, d Doc) error {
	blocks := d.Tables
	if len(d.Fields) > 0 {
		ft := &Table{Key: "fields", Columns: []Column{{Key: "key"}, {Key: "value"}}}
		for _, f := range d.Fields {
			ft.Rows = append(ft.Rows, []any{f.Key, f.Value})
		}
		blocks = append([]*Table{ft}, blocks...)
	}
	named := len(blocks) > 1
	for i, t := range blocks {
		if named {
			if i > 0 {
				if _, err := io.WriteString(w, "\n"); err != nil {
					return err
				}
			}
			if _, err := io.WriteString(w, "# "+t.Key+"\n"); err != nil {
				return err
			}
		}
		cw := csv.NewWriter(w)
		var head []string
		for _, c := range t.Columns {
			h := c.Key
			if c.Unit != "" {
				h += " [" + c.Unit + "]"
			}
			head = append(head, h)
		}
		cw.Write(head)
		for _, r := range t.Rows {
			rec := make([]string, len(r))
			for j, v := range r {
				rec[j] = csvText(v)
			}
			cw.Write(rec)
		}
		cw.Flush()
		if err := cw.Error(); err != nil {
			return err
		}
	}
	return nil
}
