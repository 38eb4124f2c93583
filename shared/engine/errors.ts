/**
 * Typed failures of the simulation engine. Every failure is one of these classes with a message a
 * person understands (what, where, when); the engine never hangs: step limit, time budget and abort
 * signal bound every run.
 */
export type SimulationErrorCode =
  | 'non_finite'
  | 'step_too_small'
  | 'step_limit'
  | 'time_budget'
  | 'aborted'
  | 'input_trace'
  | 'steady_state'
  | 'bad_request'
  | 'chattering'

export class SimulationError extends Error {
  readonly code: SimulationErrorCode
  /** the time reached when the failure happened (sheet time units), when known */
  readonly t: number | null
  constructor(code: SimulationErrorCode, message: string, t: number | null = null) {
    super(message)
    this.name = 'SimulationError'
    this.code = code
    this.t = t
  }
}

/** A derivative (or a discrete update) evaluated to NaN or ±Infinity. */
export class NonFiniteDerivativeError extends SimulationError {
  readonly state: string
  constructor(state: string, t: number, value: number) {
    super('non_finite', `the derivative of state '${state}' is ${value} at t = ${fmt(t)}`, t)
    this.name = 'NonFiniteDerivativeError'
    this.state = state
  }
}

/**
 * What the run had in use when it failed, for advice on the next thing to try that has not been
 * tried (set by simulate()).
 */
export interface RunContext {
  /** the method that was stepping: 'rk45', 'odex', 'stiff', or 'auto' before/after its switch */
  solver: string
  /** auto had switched to the stiff method */
  switched: boolean
  /** the smallest relative tolerance */
  rtol: number
  maxSteps: number
  /** sensitivities were integrated under error control */
  sensitivities: boolean
}

/** The next things to try, in order, leaving out what the run already did. */
export function adviceFor(code: 'step_limit' | 'step_too_small', ctx: RunContext): string {
  const stiffInUse = ctx.solver === 'stiff' || ctx.switched
  const out: string[] = []
  if (code === 'step_too_small') {
    out.push('look for a blow-up, a division by zero or a jump in the sheet near that time')
    if (!stiffInUse) out.push(`try solver 'stiff' (the run used '${ctx.solver}'${ctx.solver === 'auto' ? ' and did not switch' : ''})`)
    if (ctx.rtol < 1e-10) out.push(`loosen rtol (now ${fmt(ctx.rtol)})`)
    return out.join('; ')
  }
  if (!stiffInUse) out.push(`try solver 'stiff' (the run used '${ctx.solver}'${ctx.solver === 'auto' ? ' and did not detect stiffness' : ''})`)
  out.push(`raise maxSteps (now ${ctx.maxSteps})`)
  if (ctx.rtol < 1e-6) out.push(`loosen rtol (now ${fmt(ctx.rtol)})`)
  if (ctx.sensitivities) out.push('leave the sensitivities out of error control (errorControl: false)')
  if (stiffInUse) out.push('check the sheet for fast oscillation or inputs that jump often (the stiff method was already in use)')
  return out.join('; ')
}

export class StepSizeTooSmallError extends SimulationError {
  readonly h: number
  constructor(t: number, h: number, advice?: string) {
    super('step_too_small', `step size too small (h = ${fmt(h)}) at t = ${fmt(t)}: ${advice ?? 'the solution may blow up or the problem is stiff or discontinuous there'}`, t)
    this.name = 'StepSizeTooSmallError'
    this.h = h
  }
}

export class StepLimitError extends SimulationError {
  readonly maxSteps: number
  constructor(maxSteps: number, t: number, advice?: string) {
    super('step_limit', `step limit of ${maxSteps} steps exceeded at t = ${fmt(t)} (${advice ?? 'raise maxSteps, loosen the tolerances or try the stiff solver'})`, t)
    this.name = 'StepLimitError'
    this.maxSteps = maxSteps
  }
}

export class TimeBudgetError extends SimulationError {
  readonly budgetMs: number
  constructor(budgetMs: number, t: number) {
    super('time_budget', `time budget of ${budgetMs} ms used up at t = ${fmt(t)}`, t)
    this.name = 'TimeBudgetError'
    this.budgetMs = budgetMs
  }
}

export class AbortedError extends SimulationError {
  constructor(t: number | null) {
    super('aborted', t === null ? 'simulation aborted' : `simulation aborted at t = ${fmt(t)}`, t)
    this.name = 'AbortedError'
  }
}

/** A bad input trace: `row` counts the trace's samples from 1. */
export class InputTraceError extends SimulationError {
  readonly input: string
  readonly row: number | null
  constructor(input: string, row: number | null, what: string) {
    super('input_trace', `input '${input}'${row === null ? '' : `, row ${row}`}: ${what}`)
    this.name = 'InputTraceError'
    this.input = input
    this.row = row
  }
}

export class SteadyStateError extends SimulationError {
  readonly states: string[]
  constructor(states: string[], what: string) {
    super('steady_state', `steady initial state (${states.join(', ')}) not found: ${what}`, null)
    this.name = 'SteadyStateError'
    this.states = states
  }
}

/** The request itself is malformed (times out of order, wrong vector length, ...). */
export class SimulationRequestError extends SimulationError {
  constructor(message: string) {
    super('bad_request', message, null)
    this.name = 'SimulationRequestError'
  }
}

export function fmt(v: number): string {
  return Number.isFinite(v) ? String(Number(v.toPrecision(10))) : String(v)
}

/**
 * Events fired again and again within a vanishing time (a switch without hysteresis, a ball coming
 * to rest): the run stops instead of crawling; see shared/engine/events.ts.
 */
export class ChatteringError extends SimulationError {
  readonly events: string[]
  constructor(count: number, from: number, to: number, events: string[]) {
    super('chattering', `chattering: ${count} events within ${fmt(to - from)} time units up to t = ${fmt(to)}, from the event${events.length > 1 ? 's' : ''} at ${events.join(', ')}; the condition is met again right after each switch. Give the switch hysteresis (switch on below one threshold and off above another), make the reset move the state clear of the condition, or stop the run before the motion dies out`, to)
    this.name = 'ChatteringError'
    this.events = events
  }
}
