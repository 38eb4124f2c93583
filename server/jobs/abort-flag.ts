/**
 * Cancelling a fit within a second. A fit computes synchronously between its awaits, so an abort sent as
 * a message to its worker thread is delivered only when the fit next yields — which in a long simulation
 * can take many seconds. The pool therefore also raises a flag in shared memory (one Int32 in a
 * SharedArrayBuffer given to the thread), and the thread's AbortSignal reads that flag: the engine's
 * solvers check `signal.aborted` at every step, so they stop at their next step.
 */
export type AbortFlag = Int32Array

export const newAbortFlag = (): AbortFlag => new Int32Array(new SharedArrayBuffer(4))

export function raiseAbortFlag(flag: AbortFlag | undefined) {
  if (flag) Atomics.store(flag, 0, 1)
}

const abortedGetter = Object.getOwnPropertyDescriptor(AbortSignal.prototype, 'aborted')!.get!

/** Makes `signal.aborted` true also once `also()` is, read synchronously at each check; returns the signal. */
export function alsoAbortedWhen(signal: AbortSignal, also: () => boolean): AbortSignal {
  Object.defineProperty(signal, 'aborted', { configurable: true, get: () => also() || (abortedGetter.call(signal) as boolean) })
  return signal
}

export const flagRaised = (flag: AbortFlag | undefined) => () => flag !== undefined && Atomics.load(flag, 0) === 1
