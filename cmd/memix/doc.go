// Command memix simulates lipid membranes carrying active inclusions:
// membrane hydrodynamics over deep, confined or frictional subphases on a
// periodic grid, and what the flow does to the inclusions and the lipid
// composition.
//
// Usage:
//
//	memix run CONFIG [-o OUTDIR] [--force] [--force-resolution] [--quiet] [--threads N] [--set key=value]...
//	memix run --resume OUTDIR [--set time.key=value]...
//	memix check CONFIG [--json|--csv] [--resolved]
//	memix mobility CONFIG [--radius 2nm] [--method auto|numerical|…] [--json|--csv]
//	memix stability CONFIG [--compare OTHER.yaml …] [--subphases] [--figure PATH]
//	                [--kmin K] [--kmax K] [--points N] [--json|--csv]
//	memix response CONFIG [--compare OTHER.yaml] [--rmin R] [--rmax R] [--points N]
//	               [--figures DIR] [--json|--csv]
//	memix inspect PATH [--json|--csv]
//	memix mixing OUTDIR [--threshold F] [--window T0:T1] [--spectra N] [--figures] [--json|--csv]
//	memix scan SWEEP -o SCANDIR [--workers N] [--threads T] [--dry-run]
//	memix scan SWEEP -o SCANDIR --slurm [--partition P --time T --cpus C --mem M --max-parallel K] [--dry-run]
//	memix scan status SCANDIR [--json|--csv]
//	memix gather SCANDIR [-o DIR] [--all] [--no-figures] [--json|--csv]
//	memix bench [--sizes 128,256] [--models moments,kinetic-8] [--threads N] [--json|--csv]
//	memix version [--json|--csv]
//	memix help [COMMAND]
//
// Every command that prints numbers prints aligned text by default, JSON
// with --json and CSV with --csv (see internal/report). The configuration
// keys are documented in docs/config.md.
//
// # Exit codes
//
//	0  success
//	1  failure: the command ran and could not complete (an I/O error such
//	   as a full disk, a numerical failure, an output directory that
//	   exists, a damaged checkpoint, a failed point of a scan); memix run
//	   names what was kept and prints the command that continues the run
//	2  usage or configuration error: an unknown command or flag, a wrong
//	   number of arguments, a configuration file that is missing,
//	   unreadable or invalid, an invalid --set or MEMIX_* value, or for
//	   memix run an unusable initial.file, nothing to simulate or a grid
//	   that does not resolve the run (without --force-resolution); every
//	   problem is listed on stderr under its key and nothing is written
//	3  interrupted: memix run (or memix scan) received SIGINT or SIGTERM,
//	   finished its step and wrote a checkpoint; memix run --resume
//	   continues it
//
// # Adding a command
//
// A command is one file: a constructor func(*env) *cobra.Command that
// builds a fresh command (flags bound to local variables, RunE doing the
// work through library packages and printing through report), registered
// from the file's init function with register. main only calls run, which
// builds the command tree anew for each call, so tests run every command
// in-process with arguments and buffers. Use loadConfig to read a
// configuration so that its problems print and exit like every other
// command's.
package main
