// Package sim is the run loop of memix: it advances a System step by step
// until an end time or step count, calls observers on their schedules
// (diagnostics, snapshots, checkpoints), shows progress, and stops cleanly
// on cancellation (SIGINT/SIGTERM reach it through the context) or on a
// failing step.
//
// The loop knows nothing about the physics: a System is anything with a
// Step method and a clock. Time is in the System's own (reduced) unit.
//
// # Stopping
//
// A run ends for one of three reasons (Result.Reason):
//   - Finished: the end time or step count was reached. Every observer is
//     called once more with Final set, then the checkpoint is written.
//   - Interrupted: the context was cancelled. The step in progress is
//     completed (Step is never abandoned half-way), observers are called
//     with Final set, the checkpoint is written, and Run returns
//     ErrInterrupted.
//   - Failed: Step returned an error (non-finite field, step size
//     collapse), or an observer or the checkpoint failed (a full disk).
//     The state is NOT checkpointed, so the last good checkpoint on disk
//     stays the one to resume from; observers are called with Final and
//     Failed set so they can close their files, and Run returns the error
//     (a *StepError wrapping the cause for a failed step).
//
// # memix run
//
// Start and Resume wire a configuration to the loop (job.go). Their
// fault handling: everything that can fail before the first step happens
// before the output directory is created or replaced; the initial state
// is checkpointed; every step is checked for non-finite values as it
// ends, and a step that overflowed is undone and fails with a
// *BlowUpError (so a non-finite state is never observed or checkpointed);
// a failed run returns a *FailureError that says, in SI units, what went
// wrong and where, which checkpoint is kept, and the memix run command
// that continues with a smaller step (or, after a write error, once space
// is freed). Resume rejects a checkpoint that is damaged, of another
// grid, incomplete or not finite before touching the directory.
package sim
