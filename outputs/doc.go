// Package outputs writes and reads everything memix puts on disk: HDF5
// snapshots with an XDMF sidecar, checkpoints, the time series, the run
// summary and PNG figures. This comment is the reference for the output
// directory: every file, dataset, attribute, column and unit is listed
// here. All values in these files are model predictions of memix, not
// measurements.
//
// # Output directory
//
//	config.resolved.yaml   the configuration with every default filled in (written by the caller with WriteFileAtomic)
//	snapshots.h5           index of the snapshots: times, steps, external links to the snapshot files
//	snapshots.xdmf         XDMF sidecar for viewers, referencing the snapshot files
//	snapshots.d/NNNNNN.h5  one HDF5 file per snapshot, N = 000000, 000001, … in order of writing
//	checkpoint.h5          the state needed to continue the run bit for bit
//	series.csv             one row of diagnostics per output step
//	summary.json           the run summary (content defined by the caller)
//	figures/*.png          figures
//
// # Units
//
// The solver works in reduced units; [Scales] names the reduced length and
// time units (symbols such as "ℓ0", "τ0") and gives their sizes in metres
// and seconds. Lengths and times in the files are reduced unless the name
// ends in _si; every dataset carries its unit as the string attribute
// "unit", "1" meaning dimensionless. Fields are stored in whatever reduced
// unit the caller states.
//
// # Crash safety
//
// Every file except series.csv is written whole to a temporary file in the
// same directory (".NAME.tmp-RANDOM"), fsynced, renamed over NAME, and the
// directory is fsynced. A crash or a write error (full disk, I/O error)
// therefore leaves NAME with its previous complete content or its new
// complete content, never a part, and the error names NAME and wraps the
// cause (errors.Is(err, syscall.ENOSPC) detects a full disk, including one
// met inside libhdf5). A crash may leave a temporary file behind;
// [RemoveStaleTemps] and the resuming constructors delete them. One helper
// does this for every writer; [WriteFileAtomic] exposes it.
//
// Snapshots accumulate over a long run, and an HDF5 file appended in place
// is not crash-safe without SWMR (a crash during a metadata update can make
// the whole file unreadable). memix therefore never appends to an HDF5
// file. Snapshot n is written as its own file snapshots.d/NNNNNN.h5; then
// the small index snapshots.h5 is rewritten (atomically) to list snapshots
// 0…n, with HDF5 external links to their files; then the sidecar
// snapshots.xdmf is rewritten. A failure while writing snapshot n leaves
// the files of snapshots 0…n−1, the index and the sidecar untouched. A
// snapshot file that no index lists (the process died between the two
// renames, or the index could not be written) is harmless, is replaced by
// the next write and is removed when the run resumes. The cost is one
// rewrite of the index and sidecar per snapshot; measured, the index grows
// by about 50 bytes per snapshot (from about 12 kB) and the sidecar by
// about 0.5 kB plus 0.3 kB per field, small beside a snapshot's data up to
// thousands of snapshots. Alternatives rejected: one file grown in
// SWMR mode (not exposed by gonum/hdf5, needs extendible chunked datasets,
// and a file left by a crashed writer must be repaired with HDF5's tools
// before it can be written again); rewriting one growing file per snapshot
// (quadratic in the number of snapshots).
//
// series.csv is the exception: it is append-only. Each row reaches the
// operating system in one write as soon as it is given, so a crash of the
// process loses no row already given and tears none; Sync (called before every checkpoint)
// makes the rows durable. After a power loss the last row may be torn;
// [ResumeSeries] drops it, together with every row past the checkpoint's
// step.
//
// # HDF5 files
//
// Numbers are IEEE 754 binary64 (float64) or 64-bit integers in the
// machine's byte order (little-endian on x86-64 and arm64, the HDF5 types
// H5T_IEEE_F64LE and H5T_STD_I64LE), strings are variable-length UTF-8.
// 2D arrays are stored row-major with shape [Ny][Nx] (y slowest), so the
// value at grid point (i, j), x = i·Lx/Nx, y = j·Ly/Ny, is element [j][i] —
// the layout of package spectral.
//
// Root attributes of every memix HDF5 file:
//
//	memix_file       string   "snapshot", "snapshot-index" or "checkpoint" (marks a memix file)
//	memix_schema     int64    layout version, currently 1
//	program_version  string   the program that wrote the file
//	config_yaml      string   the resolved configuration (YAML)
//	nx, ny           int64    grid points along x and y
//	lx, ly           float64  box lengths [length_unit]
//	length_unit      string   symbol of the reduced length unit
//	length_unit_si   float64  size of the reduced length unit [m]
//	time_unit        string   symbol of the reduced time unit
//	time_unit_si     float64  size of the reduced time unit [s]
//
// Datasets every file holds: x [Nx] and y [Ny], the coordinates of the
// grid points [length_unit].
//
// A snapshot file (snapshots.d/NNNNNN.h5, memix_file = "snapshot") adds:
//
//	attribute field_names [n] string    the fields in the order written
//	time        scalar float64  [time_unit]
//	time_si     scalar float64  [s]
//	step        scalar int64    [1]
//	fields/NAME [Ny][Nx] float64 with attributes unit and centering = "node"
//
// The index snapshots.h5 (memix_file = "snapshot-index") adds:
//
//	attribute field_names [n] string    the fields of every snapshot, in order
//	attribute field_units [n] string    their units
//	time        [m] float64  [time_unit]   time of each snapshot
//	time_si     [m] float64  [s]
//	step        [m] int64    [1]
//	snapshots/NNNNNN   external link to "snapshots.d/NNNNNN.h5", object "/"
//
// so that snapshots.h5:/snapshots/000003/fields/phi is field phi of the
// fourth snapshot. HDF5 resolves the links relative to the directory of the
// index, so the output directory can be moved as a whole.
//
// The checkpoint checkpoint.h5 (memix_file = "checkpoint") adds:
//
//	attribute spectral_names, real_names, scalar_names  [n] string  the entries in order
//	time        scalar float64  [time_unit]
//	time_si     scalar float64  [s]
//	step        scalar int64    [1]
//	dt          scalar float64  [time_unit]   the current time step
//	rng_state   [n] uint8       [byte]        the random number generator's state, opaque
//	spectral/NAME [Ny][Nx/2+1][2] float64     a spectral field, attributes unit, layout, normalisation
//	real/NAME     [Ny][Nx] float64            a real field, attributes unit, centering = "node"
//	scalars/NAME  scalar float64              attribute unit
//
// A spectral field is the half spectrum of package spectral: element
// [j][i][0] and [j][i][1] are the real and imaginary parts of the
// box-normalised coefficient of wavevector 2π(i/Lx, m(j)/Ly), m(j) = j for
// j ≤ Ny/2 and j − Ny otherwise. Reading a checkpoint returns exactly the
// bits written.
//
// [Open] rejects an HDF5 file without memix_file or with another
// memix_schema.
//
// On cluster file systems without POSIX locks (some Lustre or NFS mounts)
// libhdf5 may refuse to open files; setting HDF5_USE_FILE_LOCKING=FALSE in
// the environment is the library's own remedy.
//
// # XDMF sidecar
//
// snapshots.xdmf (XDMF version 2.0; the elements used mean the same in
// XDMF 3) holds one Domain with a Grid of GridType "Collection" and
// CollectionType "Temporal", and in it one Uniform Grid per snapshot, named
// NNNNNN, with
//
//   - Time Value = the reduced time,
//   - Topology "2DCoRectMesh" with Dimensions "Ny Nx",
//   - Geometry "ORIGIN_DXDY" with origin "0 0" and spacing "Ly/Ny Lx/Nx"
//     (XDMF lists y before x),
//   - per field an Attribute (AttributeType "Scalar", Center "Node") whose
//     DataItem (Format "HDF", Float, Precision 8, Dimensions "Ny Nx") is
//     "snapshots.d/NNNNNN.h5:/fields/NAME", relative to the sidecar, and an
//     Information element named "unit" holding the field's unit.
//
// The fields are samples at the grid points, so they are node-centred on a
// mesh whose nodes are the grid points; the periodic copy of the first row
// and column is not repeated, so a viewer shows [0, Lx−Δx] × [0, Ly−Δy].
// Information elements at the top give the time and length unit symbols.
//
// # series.csv
//
// The first line names the columns, each as "name [unit]", for example
//
//	time [τ0],time_si [s],step [1],variance [1],mix_h1 [ℓ0]
//
// with "1" for a dimensionless column. Names match [A-Za-z0-9_.+-]+ and
// units contain no comma, quote, bracket or line break, so no cell is ever
// quoted. Each further line is one row: numbers in the shortest form that
// reads back to the same float64, integers up to 2⁵³ without exponent,
// NaN, +Inf and -Inf as such. The columns themselves are chosen by the
// caller (package sim documents them).
//
// # summary.json
//
// Written by [WriteJSON] from a Go value: indented by two spaces, final
// newline, replaced atomically. NaN and infinities are not JSON and are
// rejected.
//
// # Figures
//
// PNG images of a given pixel size (default 800 × 600; map heights follow
// the map's aspect ratio), replaced atomically, the directory created if
// needed. Maps ([HeatMap], [DirectorMap], [VectorMap]) show one sharp cell
// of size Δx × Δy per sample centred on it, y upwards, with equal scales on
// both axes, and a colour bar labelled "name [unit]". Sequential data use
// Kindlmann's luminance-linear map from black to 95 % luminance [Kindlmann,
// Reinhard & Creem, Proc. IEEE Visualization 2002, 299]; data of both signs
// (or ScaleDiverging) use Moreland's smooth blue–red diverging map on a
// range symmetric about zero, zero at its light centre [Moreland, ISVC 2009,
// LNCS 5876, 92]; both are open and come with gonum/plot. NaN samples are
// left blank. Directors are headless black segments with a white halo,
// arrows are centred on their sample with length proportional to the
// magnitude. [Lines] draws labelled curves (line, points or both) with
// optional logarithmic axes, leaving out points that cannot be drawn.
//
// # Conventions
//
// Destination-first where something is filled ([File.ReadField]). A slice
// whose length does not match the grid or lattice is a programmer error
// and panics; bad data (a missing file, a wrong grid, a malformed name) is
// an error naming the file and the value. No type here is safe for
// concurrent use. HDF5 calls run with the goroutine locked to its thread,
// because libhdf5 keeps its error stack per thread.
package outputs
