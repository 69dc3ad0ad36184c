package main

import (
	"fmt"
	"path/filepath"

	"github.com/spf13/cobra"

	"github.com/memix-sim/memix/cmd/memix/internal/report"
	"github.com/memix-sim/memix/config"
	"github.com/memix-sim/memix/scan"
)

func init() { register(newGatherCmd) }

// textResult reports whether result k is a column of the text table (the
// files and --json/--csv hold every headline result).
func textResult(k string) bool {
	switch k {
	case "mixing.mixnorm.ratio", "mixing.mixnorm.decay_rate_per_s", "mixing.mixnorm.threshold_time_s",
		"prediction.growth_rate_per_s", "prediction.fastest_wavelength_m", "domain_length_m.Final", "wall_time_s":
		return true
	}
	return false
}

func newGatherCmd(e *env) *cobra.Command {
	var (
		out       report.Flags
		dir       string
		all       bool
		noFigures bool
	)
	c := &cobra.Command{
		Use:   "gather SCANDIR [-o DIR] [--all] [--no-figures] [--json|--csv]",
		Short: "Collect the results of a scan into one table with comparison figures",
		Long: `gather reads the summary.json of every point of SCANDIR and writes one table,
results.csv and results.json, with each point's state, parameters and results: the
final mix-norm over its initial value, the fitted mix-norm decay rate, the times at
which the norms fell to output.threshold, the growth rate and wavelength of the
fastest mode that linear stability predicts, the final domain length and the wall
time (keys as in summary.json, docs/outputs.md; --all adds every number of the
summaries). It draws figures/mixnorm.png (the mix-norm of every point over time,
overlaid and labelled by the varied parameters) and figures/RESULT-vs-AXIS.png
(each result against each varied parameter). Files go to SCANDIR/gather unless -o
is given. It prints the table (--json or --csv: every column). All results are
model predictions, not measurements.`,
		Example: "  memix gather deep-vs-wall\n  memix gather deep-vs-wall --csv > results.csv",
		Args:    cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			f, err := out.Format()
			if err != nil {
				return usageError{err}
			}
			tab, files, err := scan.Gather(cmd.Context(), args[0], scan.GatherOptions{
				Converter: scan.ConfigConverter, OutDir: dir, NoFigures: noFigures, AllNumbers: all,
			})
			if err != nil && tab == nil {
				return err
			}
			figErr := err
			doc := gatherDoc(tab, files, f)
			if werr := report.Write(e.stdout, f, doc); werr != nil {
				return werr
			}
			if figErr != nil {
				return fmt.Errorf("gather wrote the table but not every figure: %w", figErr)
			}
			return nil
		},
	}
	fl := c.Flags()
	out.Bind(fl)
	fl.StringVarP(&dir, "output", "o", "", "`folder` for the table and figures (default SCANDIR/gather)")
	fl.BoolVar(&all, "all", false, "put every number of the points' summary.json into the table")
	fl.BoolVar(&noFigures, "no-figures", false, "write the table only")
	return c
}

// gatherDoc is the printed form of a gathered table. Text shows the main
// columns, with lengths in readable units; JSON and CSV every column in SI.
func gatherDoc(tab *scan.Table, files []string, f report.Format) report.Doc {
	cols := []report.Column{{Key: "index"}, {Key: "id"}, {Key: "status"}}
	for _, a := range tab.Axes {
		cols = append(cols, report.Column{Key: a.Key, Title: shortAxis(a.Key)})
	}
	results := tab.Columns()
	var shown []scan.ResultKey
	for _, r := range results {
		if f != report.Text || textResult(r.Key) {
			shown = append(shown, r)
		}
	}
	for _, r := range shown {
		col := report.Column{Key: r.Key, Title: r.Title, Unit: r.Unit}
		if r.Unit == "m" {
			col.TextUnitInCells = true
		}
		cols = append(cols, col)
	}
	if f != report.Text {
		cols = append(cols, report.Column{Key: "error"})
	}
	t := &report.Table{Key: "points", Title: "Results (model predictions)", Columns: cols}
	finished, failed := 0, 0
	for _, r := range tab.Rows {
		row := []any{r.Index, r.ID, string(r.State)}
		row = append(row, paramCells(tab.Axes, r.Params)...)
		for _, k := range shown {
			v, ok := r.Results[k.Key]
			switch {
			case !ok:
				row = append(row, nil)
			case k.Unit == "m":
				row = append(row, report.Cell{Value: v, Text: config.FormatHuman(v, config.DimLength)})
			default:
				row = append(row, v)
			}
		}
		if f != report.Text {
			row = append(row, r.Error)
		}
		t.Rows = append(t.Rows, row)
		switch r.State {
		case scan.Finished:
			finished++
		case scan.Failed:
			failed++
			if f == report.Text {
				t.Notes = append(t.Notes, fmt.Sprintf("point %d (%s) failed: %s", r.Index, r.ID, firstLineOf(r.Error)))
			}
		}
	}
	if f == report.Text {
		t.Notes = append(t.Notes, "\"–\": no value (not finished, or a threshold never reached); every column: --csv or --json")
	}
	doc := report.Doc{Tables: []*report.Table{t}}
	if f == report.CSV {
		return doc
	}
	figs := 0
	for _, p := range files {
		if filepath.Ext(p) == ".png" {
			figs++
		}
	}
	var tables []string
	figDir := ""
	for _, p := range files {
		if filepath.Ext(p) != ".png" {
			tables = append(tables, p)
			figDir = filepath.Join(filepath.Dir(p), "figures")
		}
	}
	doc.Fields = []report.Field{
		{Key: "total", Title: "points", Value: len(tab.Rows)},
		{Key: "finished", Value: finished},
		{Key: "failed", Value: failed},
		{Key: "table", Value: tables},
		{Key: "figures", Value: fmt.Sprintf("%d in %s", figs, figDir)},
		{Key: "note", Value: "model predictions, not measurements"},
	}
	return doc
}
