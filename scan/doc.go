// Package scan runs parameter sweeps of memix: it expands a sweep file into
// points, each with its own configuration and folder, runs them with a
// local worker pool or as a Slurm job array, reports their state, and
// gathers their summaries into one table with comparison figures.
//
// Every point is one "memix run" (see [Runner]); the scan relies only on
// the run contract: exit 0 with OUTDIR/summary.json status "finished";
// on SIGTERM or SIGINT a checkpoint (OUTDIR/checkpoint.h5), status
// "interrupted" and exit 3, continued by "memix run --resume OUTDIR"; any
// other exit status is a failure. The scan holds no physics and converts
// no units beyond spacing ranges (see [Converter]).
//
// # Sweep file
//
// A YAML mapping:
//
//	base: ../configs/membrane.yaml   # relative to the sweep file; or an inline mapping
//	mode: product                    # how the keys under axes combine: product (default) or zip
//	axes:                            # configuration key (dotted path) -> values
//	  subphase.lower.kind: [deep, wall]                  # a list: any YAML values
//	  subphase.lower.depth: {log: [50 nm, 50 um], n: 7}  # n values, logarithmically spaced
//	  membrane.viscosity: {lin: [1 nPa*s*m, 5 nPa*s*m], n: 5}  # n values, evenly spaced
//	zip:                             # optional groups of keys paired by position
//	  - active.strength: [2 kT, 4 kT, 8 kT]
//	    active.density: [100 um^-2, 200 um^-2, 400 um^-2]
//	replicates: {n: 3, key: run.seed, first: 1}          # or {key: run.seed, seeds: [7, 19, 23]}
//
// The points are the full product of the factors in the order written:
// each key under axes is one factor (with mode: zip all of them together
// form a single factor whose values are paired by position, and must be
// equally long), each group under zip is one factor, and the replicates are
// the last factor. The first factor varies slowest. A range {lin|log:
// [first, last], n: N} (N ≥ 2) gives values with the unit of first, written
// back as "value unit" with six significant digits; last may use another
// prefix of the same unit ("50 um" after "50 nm"). Replicates set the seed
// key to n distinct whole numbers first, first+1, ... (default first: 1), or
// to the listed seeds; the seed is a parameter like any other. Keys absent
// from the base configuration are added; a key whose base value is not a
// section cannot have sub-keys.
//
// # Point identity
//
// A point's ID is "p-" and ten hexadecimal digits of the SHA-256 hash of
// its parameters (sorted keys with canonical JSON values). It does not
// depend on the point's position, so adding a value to an axis adds points
// without renaming the others, and an expanded scan can be expanded again
// with a larger sweep: finished points stay finished. Index is the position
// in the current expansion; points.csv lists index, ID and the values.
//
// # Scan directory
//
//	sweep.yaml, base.yaml     the sweep as given and its base configuration
//	points.json, points.csv   the axes and the points (index, id, values)
//	points/ID/config.yaml     the point's resolved configuration
//	points/ID/out/            memix's output folder (run -o): summary.json, series.csv, ...
//	points/ID/out.attempt-N/  outputs of earlier failed attempts, kept
//	points/ID/stdout.log, stderr.log   memix's output streams, appended per attempt
//	points/ID/failure.txt     the last failure (removed when the point is run again);
//	                          failures.log keeps them all
//	points/ID/running, .lock  who is running the point; its lock (flock)
//	slurm/array.sh            the last job-array script written
//	slurm/job-JOBID.sh, slurm/jobs.json   submitted scripts, job ids and task → point maps
//	slurm/logs/JOBID_TASK.out, .err       Slurm's own logs per array task
//	gather/results.csv, results.json, figures/*.png
//
// All files are written to a temporary name and renamed. Two scans in
// different folders share nothing. Two runners of one scan (a second
// RunLocal, or a local run beside a Slurm job) share the work safely: each
// point is locked while it runs.
//
// The package is for Unix systems (it uses flock and process groups).
package scan
