/**
 * How runs reach whatever executes them. server/services/runs enqueues through `ctx.services.jobs`;
 * the default in-process runner and the worker-pool / pg-boss runners implement this interface.
 * Execution itself is `executeRun` (server/services/fit-execution.ts): load the run, fit, store the
 * result, writing progress to the run row and polling its cancel flag, so it works from any process.
 */
export interface JobRunner {
  /** hand a queued run to an executor; resolves once it is accepted (not when it finishes) */
  enqueue(runId: number): Promise<void>
  /** ask an executing run to stop (its row's cancel flag is also set by the caller) */
  cancel(runId: number): Promise<void>
  /** wait for running work to settle (tests) */
  idle?(): Promise<void>
  close(): Promise<void>
}
