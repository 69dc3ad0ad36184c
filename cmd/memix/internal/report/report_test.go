package report

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"math"
	"strings"
	"testing"

	"github.com/spf13/pflag"
)

func sample() Doc {
	return Doc{
		Fields: []Field{{Key: "config", Title: "Configuration", Value: "a.yaml"}, {Key: "valid", Value: true}},
		Tables: []*Table{{
			Key:     "lengths",
			Title:   "Lengths",
			Columns: []Column{{Key: "name"}, {Key: "value", Title: "Value", Unit: "m"}, {Key: "points"}},
			Rows: [][]any{
				{"saffman_delbruck", Cell{5.6e-7, "560 nm"}, 7},
				{"friction", math.Inf(1), nil},
			},
			Notes: []string{"a note"},
		}, {
			Key:     "advice",
			Columns: []Column{{Key: "level"}, {Key: "text"}},
			Rows:    [][]any{{"ok", "fine, really"}},
		}},
	}
}

func TestText(t *testing.T) {
	var b bytes.Buffer
	if err := Write(&b, Text, sample()); err != nil {
		t.Fatal(err)
	}
	want := `Configuration:  a.yaml
valid:          true

Lengths
name              Value [m]  points
saffman_delbruck  560 nm     7
friction          ∞          –
a note

level  text
ok     fine, really
`
	if b.String() != want {
		t.Errorf("got\n%s\nwant\n%s", b.String(), want)
	}
}

func TestJSON(t *testing.T) {
	var b bytes.Buffer
	if err := Write(&b, JSON, sample()); err != nil {
		t.Fatal(err)
	}
	var got map[string]any
	if err := json.Unmarshal(b.Bytes(), &got); err != nil {
		t.Fatalf("%v\n%s", err, b.String())
	}
	if got["config"] != "a.yaml" || got["valid"] != true {
		t.Errorf("fields %v", got)
	}
	rows := got["lengths"].(map[string]any)["rows"].([]any)
	r0, r1 := rows[0].(map[string]any), rows[1].(map[string]any)
	if r0["value"] != 5.6e-7 || r0["points"] != 7.0 || r1["value"] != nil || r1["points"] != nil {
		t.Errorf("rows %v", rows)
	}
	cols := got["lengths"].(map[string]any)["columns"].([]any)
	if cols[1].(map[string]any)["unit"] != "m" {
		t.Errorf("columns %v", cols)
	}
	// Members keep their order.
	if i, j := strings.Index(b.String(), `"config"`), strings.Index(b.String(), `"advice"`); i < 0 || j < i {
		t.Errorf("order:\n%s", b.String())
	}
}

func TestCSV(t *testing.T) {
	var b bytes.Buffer
	one := Doc{Tables: sample().Tables[:1]}
	if err := Write(&b, CSV, one); err != nil {
		t.Fatal(err)
	}
	recs, err := csv.NewReader(&b).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	want := [][]string{{"name", "value [m]", "points"}, {"saffman_delbruck", "5.6e-07", "7"}, {"friction", "", ""}}
	if len(recs) != 3 || strings.Join(recs[0], ",") != strings.Join(want[0], ",") || strings.Join(recs[1], ",") != strings.Join(want[1], ",") || strings.Join(recs[2], ",") != strings.Join(want[2], ",") {
		t.Errorf("got %q, want %q", recs, want)
	}
	b.Reset()
	Write(&b, CSV, sample())
	blocks := strings.Split(b.String(), "\n\n")
	if len(blocks) != 3 || !strings.HasPrefix(blocks[0], "# fields\nkey,value\nconfig,a.yaml\n") || !strings.HasPrefix(blocks[2], "# advice\nlevel,text\nok,\"fine, really\"") {
		t.Errorf("multi-block CSV:\n%s", b.String())
	}
}

func TestFlags(t *testing.T) {
	for _, tt := range []struct {
		args []string
		f    Format
		err  error
	}{{nil, Text, nil}, {[]string{"--json"}, JSON, nil}, {[]string{"--csv"}, CSV, nil}, {[]string{"--json", "--csv"}, Text, ErrFormat}} {
		var fl Flags
		fs := pflag.NewFlagSet("x", pflag.ContinueOnError)
		fl.Bind(fs)
		if err := fs.Parse(tt.args); err != nil {
			t.Fatal(err)
		}
		f, err := fl.Format()
		if f != tt.f || !errors.Is(err, tt.err) {
			t.Errorf("%v: %v %v", tt.args, f, err)
		}
	}
}

func TestPanics(t *testing.T) {
	defer func() {
		if recover() == nil {
			t.Error("a short row did not panic")
		}
	}()
	Write(&bytes.Buffer{}, Text, Doc{Tables: []*Table{{Key: "t", Columns: []Column{{Key: "a"}, {Key: "b"}}, Rows: [][]any{{1}}}}})
}
