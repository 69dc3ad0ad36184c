package report_test

import (
	"os"

	"github.com/memix-sim/memix/cmd/memix/internal/report"
)

func Example() {
	doc := report.Doc{Tables: []*report.Table{{
		Key:     "modes",
		Title:   "Growth rates",
		Columns: []report.Column{{Key: "k", Unit: "1/um"}, {Key: "rate", Unit: "1/s"}},
		Rows:    [][]any{{1.0, 0.25}, {2.0, -0.5}},
	}}}
	report.Write(os.Stdout, report.Text, doc)
	report.Write(os.Stdout, report.CSV, doc)
	// Output:
	// Growth rates
	// k [1/um]  rate [1/s]
	// 1         0.25
	// 2         -0.5
	// k [1/um],rate [1/s]
	// 1,0.25
	// 2,-0.5
}
