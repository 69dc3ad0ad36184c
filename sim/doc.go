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
package sim
