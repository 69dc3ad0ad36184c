package main

import (
	"math"
	"path/filepath"
	"strings"
	"testing"

	"github.com/memix-sim/memix/outputs"
	"github.com/memix-sim/memix/spectral"
)

// TestInspectIndex: an output directory and its index list every
// snapshot with reduced and SI times, steps and fields.
func TestInspectIndex(t *testing.T) {
	dir := writeRun(t, 0, func(tt float64) float64 { return math.Exp(-tt) }, "phi")
	for _, p := range []string{dir, filepath.Join(dir, outputs.SnapshotIndexName)} {
		doc := memixJSON(t, "inspect", p)
		if doc["kind"] != outputs.KindSnapshotIndex || doc["program_version"] != "memix test" || doc["grid"] != "32×32" ||
			doc["snapshot_count"] != float64(runFrames) || doc["lx"] != runL0 || doc["time_unit"] != runTau0 || doc["length_unit_symbol"] != "l0" {
			t.Errorf("%s: %v", p, doc)
		}
		snaps := rows(t, doc, "snapshots")
		if len(snaps) != runFrames {
			t.Fatalf("%d snapshots", len(snaps))
		}
		s := snaps[4]
		if s["time"] != 4*runDt || relErr(num(t, s["time_si"]), 4*runDt*runTau0) > 1e-15 || s["step"] != 40.0 || s["fields"] != "phi [1]" || s["file"] != "snapshots.d/000004.h5" {
			t.Errorf("snapshot 4: %v", s)
		}
	}
	out, _, code := memix(t, "inspect", dir)
	if code != 0 || !strings.Contains(out, "snapshot index") || !strings.Contains(out, "1 l0 = 2 µm") || !strings.Contains(out, "model predictions") {
		t.Errorf("text: exit %d\n%s", code, out)
	}
	out, _, code = memix(t, "inspect", dir, "--csv")
	if code != 0 || strings.Join(csvBlock(t, out, "snapshots")[0], ",") != "index,time [tau0],time_si [s],step,fields,file" {
		t.Errorf("csv: exit %d\n%s", code, out)
	}
	// One snapshot file.
	doc := memixJSON(t, "inspect", filepath.Join(dir, outputs.SnapshotDirName, "000002.h5"))
	if doc["kind"] != outputs.KindSnapshot || len(rows(t, doc, "snapshots")) != 1 || rows(t, doc, "snapshots")[0]["step"] != 20.0 {
		t.Errorf("snapshot file: %v", doc)
	}
}

// TestInspectCheckpoint: a checkpoint shows its time, step, time step and
// entries, scalars with their values.
func TestInspectCheckpoint(t *testing.T) {
	g, err := spectral.NewGrid(8, 4, 2, 1)
	if err != nil {
		t.Fatal(err)
	}
	p := filepath.Join(t.TempDir(), outputs.CheckpointName)
	c := &outputs.Checkpoint{
		Info: outputs.RunInfo{Version: "memix test", Config: "a: 1\n", Scales: outputs.Scales{LengthUnit: "l0", Length: 1e-6, TimeUnit: "tau0", Time: 2e-3}},
		Time: 12.5, Step: 77, Dt: 0.25,
		Spectral: []outputs.SpectralField{{Name: "phi", Unit: "1", Data: g.NewSpectral()}},
		Real:     []outputs.Field{{Name: "eta", Unit: "eta0", Data: g.NewReal()}},
		Scalars:  []outputs.Scalar{{Name: "level", Unit: "1", Value: 3}},
		RNG:      []byte{1, 2, 3},
	}
	if err := outputs.WriteCheckpoint(p, g, c); err != nil {
		t.Fatal(err)
	}
	doc := memixJSON(t, "inspect", p)
	if doc["kind"] != outputs.KindCheckpoint || doc["step"] != 77.0 || doc["time"] != 12.5 || doc["time_si"] != 12.5*2e-3 ||
		doc["dt_si"] != 0.25*2e-3 || doc["grid"] != "8×4" || doc["ly"] != 1e-6 || doc["rng_state_bytes"] != 3.0 {
		t.Errorf("checkpoint: %v", doc)
	}
	es := rows(t, doc, "entries")
	if len(es) != 3 || es[0]["name"] != "phi" || es[1]["kind"] != "real field" || es[2]["value"] != 3.0 || es[2]["unit"] != "1" {
		t.Errorf("entries %v", es)
	}
}

// TestInspectRun: the output directory of memix run.
func TestInspectRun(t *testing.T) {
	dir := runMixRun(t)
	doc := memixJSON(t, "inspect", dir)
	snaps := rows(t, doc, "snapshots")
	if doc["kind"] != outputs.KindSnapshotIndex || len(snaps) != 5 || !strings.Contains(snaps[0]["fields"].(string), "phi [1]") {
		t.Errorf("run index: %v", doc)
	}
	doc = memixJSON(t, "inspect", filepath.Join(dir, outputs.CheckpointName))
	if doc["kind"] != outputs.KindCheckpoint || doc["step"] != snaps[4]["step"] {
		t.Errorf("run checkpoint: step %v, last snapshot %v", doc["step"], snaps[4]["step"])
	}
}

func TestInspectBad(t *testing.T) {
	wantBad(t, []string{"inspect", "../../examples/glass-gap.yaml"}, "glass-gap.yaml", "not an HDF5 file")
	wantBad(t, []string{"inspect", filepath.Join(t.TempDir(), "none.h5")}, "none.h5", "no such file")
	wantBad(t, []string{"inspect", t.TempDir()}, "not a memix output directory")
	_, errs, code := memix(t, "inspect")
	if code != 2 || !strings.Contains(errs, "accepts 1 arg") {
		t.Errorf("no argument: exit %d, %s", code, errs)
	}
}
