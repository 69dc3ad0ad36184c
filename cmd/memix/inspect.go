package main

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"github.com/spf13/cobra"

	"github.com/memix-sim/memix/cmd/memix/internal/report"
	"github.com/memix-sim/memix/config"
	"github.com/memix-sim/memix/outputs"
	"github.com/memix-sim/memix/spectral"
)

func init() { register(newInspectCmd) }

func newInspectCmd(e *env) *cobra.Command {
	var out report.Flags
	cmd := &cobra.Command{
		Use:   "inspect PATH",
		Short: "Show what a memix output file holds",
		Long: `inspect describes a memix HDF5 output: the snapshot index snapshots.h5, one snapshot file
snapshots.d/NNNNNN.h5, or a checkpoint checkpoint.h5. PATH may also be an output directory, whose
snapshot index (or, without one, its checkpoint) is described.

It prints the kind of file, the program version that wrote it, the grid, the box in reduced and
SI units, the reduced units, and every snapshot with its time (reduced and in seconds), step
and fields with their units; for a checkpoint also the time step and the stored fields and
scalars with their values. A file that is not a memix output is an error (exit status 2).`,
		Example: "  memix inspect run-out\n  memix inspect run-out/checkpoint.h5 --json\n  memix inspect run-out/snapshots.d/000003.h5 --csv",
		Args:    cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			f, err := out.Format()
			if err != nil {
				return usageError{err}
			}
			path, err := outputFile(args[0])
			if err != nil {
				return err
			}
			doc, err := inspectDoc(path)
			if err != nil {
				return err
			}
			return report.Write(cmd.OutOrStdout(), f, doc)
		},
	}
	out.Bind(cmd.Flags())
	return cmd
}

// outputFile resolves PATH: a file as it is, an output directory to its
// snapshot index or else its checkpoint.
func outputFile(path string) (string, error) {
	st, err := os.Stat(path)
	if err != nil {
		return "", inputError{path, errors.Unwrap(err)}
	}
	if !st.IsDir() {
		return path, nil
	}
	for _, name := range []string{outputs.SnapshotIndexName, outputs.CheckpointName} {
		p := filepath.Join(path, name)
		if _, err := os.Stat(p); err == nil {
			return p, nil
		}
	}
	return "", inputError{path, fmt.Errorf("a directory without %s or %s: not a memix output directory", outputs.SnapshotIndexName, outputs.CheckpointName)}
}

var kindText = map[string]string{
	outputs.KindSnapshotIndex: "snapshot index (lists every snapshot of a run)",
	outputs.KindSnapshot:      "one snapshot",
	outputs.KindCheckpoint:    "checkpoint (the exact state to resume a run)",
}

// fieldsText lists fields as "phi [1], ux [l0/tau0]".
func fieldsText(fs []outputs.FieldInfo) string {
	var parts []string
	for _, f := range fs {
		parts = append(parts, fmt.Sprintf("%s [%s]", f.Name, f.Unit))
	}
	return strings.Join(parts, ", ")
}

func inspectDoc(path string) (report.Doc, error) {
	f, err := outputs.Open(path)
	if err != nil {
		return report.Doc{}, inputError{"", err} // the error names path
	}
	defer f.Close()
	info, g := f.Info(), f.Grid()
	sc := info.Scales
	lines := strings.Count(info.Config, "\n")
	fields := []report.Field{
		{Key: "path", Value: path},
		{Key: "kind", Value: report.Cell{Value: f.Kind(), Text: kindText[f.Kind()]}},
		{Key: "program_version", Title: "written by", Value: info.Version},
		{Key: "grid", Value: fmt.Sprintf("%d×%d", g.Nx, g.Ny)},
		{Key: "lx", Title: "box lx", Value: report.Cell{Value: g.Lx * sc.Length, Text: fmt.Sprintf("%s %s = %s", report.FormatFloat(g.Lx), sc.LengthUnit, human(g.Lx*sc.Length, config.DimLength))}},
		{Key: "ly", Title: "box ly", Value: report.Cell{Value: g.Ly * sc.Length, Text: fmt.Sprintf("%s %s = %s", report.FormatFloat(g.Ly), sc.LengthUnit, human(g.Ly*sc.Length, config.DimLength))}},
		{Key: "length_unit", Title: "length unit", Value: report.Cell{Value: sc.Length, Text: sc.LengthUnit + " = " + human(sc.Length, config.DimLength)}},
		{Key: "length_unit_symbol", Title: "length unit symbol", Value: sc.LengthUnit},
		{Key: "time_unit", Title: "time unit", Value: report.Cell{Value: sc.Time, Text: sc.TimeUnit + " = " + human(sc.Time, config.DimTime)}},
		{Key: "time_unit_symbol", Title: "time unit symbol", Value: sc.TimeUnit},
		{Key: "config_lines", Title: "resolved configuration", Value: report.Cell{Value: lines, Text: fmt.Sprintf("recorded, %d lines", lines)}},
	}
	snaps := f.Snapshots()
	var tables []*report.Table
	if f.Kind() != outputs.KindCheckpoint {
		fields = append(fields, report.Field{Key: "snapshot_count", Title: "snapshots", Value: len(snaps)})
		t := &report.Table{
			Key:   "snapshots",
			Title: "Snapshots",
			Columns: []report.Column{
				{Key: "index"},
				{Key: "time", Unit: sc.TimeUnit},
				qcol("time_si", "time", config.DimTime),
				{Key: "step"},
				{Key: "fields", Title: "fields [unit]"},
				{Key: "file"},
			},
			Notes: []string{"Field values are model predictions in reduced units."},
		}
		for i, s := range snaps {
			t.Rows = append(t.Rows, []any{i, s.Time, qcell(s.TimeSI, config.DimTime), int(s.Step), fieldsText(s.Fields), s.File})
		}
		tables = append(tables, t)
		return report.Doc{Fields: fields, Tables: tables}, nil
	}

	grid, err := spectral.NewGrid(g.Nx, g.Ny, g.Lx, g.Ly)
	if err != nil {
		return report.Doc{}, inputError{path, err}
	}
	f.Close() // ReadCheckpoint opens the file itself
	c, err := outputs.ReadCheckpoint(path, grid, outputs.Expect{})
	if err != nil {
		return report.Doc{}, inputError{"", err}
	}
	fields = append(fields,
		report.Field{Key: "time", Title: "time (" + sc.TimeUnit + ")", Value: c.Time},
		report.Field{Key: "time_si", Title: "time", Value: qcell(c.Time*sc.Time, config.DimTime)},
		report.Field{Key: "step", Value: int(c.Step)},
		report.Field{Key: "dt", Title: "time step (" + sc.TimeUnit + ")", Value: c.Dt},
		report.Field{Key: "dt_si", Title: "time step", Value: qcell(c.Dt*sc.Time, config.DimTime)},
		report.Field{Key: "rng_state_bytes", Title: "random generator state", Value: report.Cell{Value: len(c.RNG), Text: fmt.Sprintf("%d bytes", len(c.RNG))}},
	)
	t := &report.Table{
		Key:     "entries",
		Title:   "Checkpoint contents",
		Columns: []report.Column{{Key: "kind"}, {Key: "name"}, {Key: "unit"}, {Key: "value"}},
	}
	for _, s := range c.Spectral {
		t.Rows = append(t.Rows, []any{"spectral field", s.Name, s.Unit, report.Cell{Value: nil, Text: fmt.Sprintf("%d coefficients", len(s.Data))}})
	}
	for _, r := range c.Real {
		t.Rows = append(t.Rows, []any{"real field", r.Name, r.Unit, report.Cell{Value: nil, Text: fmt.Sprintf("%d values", len(r.Data))}})
	}
	for _, s := range c.Scalars {
		t.Rows = append(t.Rows, []any{"scalar", s.Name, s.Unit, s.Value})
	}
	return report.Doc{Fields: fields, Tables: append(tables, t)}, nil
}
