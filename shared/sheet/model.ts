/** The typed model a sheet parses into (declared values converted to internal SI units). */
import type { Expr } from './ast'
import type { Span } from './diagnostics'
import type { UnitInfo } from './units'
import type { DelayInfo, SheetHeader } from './compiled'

export interface DeclBase {
  name: string
  description: string
  /** null when the sheet wrote no unit: the unit check skips the symbol */
  unit: UnitInfo | null
  /** where the name is written */
  span: Span
}

export interface StateDecl extends DeclBase {
  /** initial value, internal units */
  initial: number
  /** initial value as written */
  declaredInitial: number
  estimate: boolean
  steady: boolean
  lower: number | null
  upper: number | null
  declaredLower: number | null
  declaredUpper: number | null
}

export interface ParamDecl extends DeclBase {
  value: number
  declaredValue: number
  lower: number | null
  upper: number | null
  declaredLower: number | null
  declaredUpper: number | null
  fixed: boolean
}

export interface ConstDecl extends DeclBase {
  value: number
  declaredValue: number
}

export interface InputDecl extends DeclBase {
  value: number
  declaredValue: number
  interp: 'linear' | 'hold'
}

export interface LookupDecl extends DeclBase {
  /** argument unit (unit = result unit) */
  argUnit: UnitInfo | null
  /** break points and values, internal units */
  xs: Float64Array
  ys: Float64Array
}

export interface LetDecl extends DeclBase {
  expr: Expr
  /** source text of the expression (for tests and tools) */
  text: string
}

export interface EquationDecl {
  /** index of the state */
  state: number
  expr: Expr
  text: string
  span: Span
  /** 'derivative' for dx/dt = … (or the older x' = …), 'next' for next x = … */
  form: 'derivative' | 'next'
  /**
   * factor turning the SI value of the right side into the compiled rhs:
   * secondsPerTimeUnit for a derivative whose unit is known, else 1
   */
  timeFactor: number
}

export interface OutputDecl extends DeclBase {
  expr: Expr
  text: string
  /** internal units */
  sigma: number | null
  declaredSigma: number | null
}

/** A discrete mode (switch position) that equations read: 0 for off/closed, 1 for on/open, or a whole number. */
export interface ModeDecl extends DeclBase {
  initial: number
}

/** One assignment of an event: a state gets the value of an expression, or a mode a position. */
export type ResetDecl =
  | { target: 'state'; index: number; expr: Expr; text: string; span: Span }
  | { target: 'mode'; index: number; value: number; span: Span }

/** `event A falls below B then …`: the condition h = A − B crossing zero in a direction. */
export interface EventDecl {
  lhs: Expr
  rhs: Expr
  /** 'down': h goes from > 0 to <= 0 (falls below); 'up': from < 0 to >= 0 (rises above); 'either' (crosses) */
  direction: 'up' | 'down' | 'either'
  /** the condition as written */
  text: string
  description: string
  /** the `event` keyword */
  span: Span
  resets: ResetDecl[]
}

export interface ParsedModel extends SheetHeader {
  states: StateDecl[]
  params: ParamDecl[]
  consts: ConstDecl[]
  inputs: InputDecl[]
  lookups: LookupDecl[]
  /** in declaration order; `let` references in expressions index this list */
  lets: LetDecl[]
  /** evaluation order of the lets (each after the lets it uses) */
  letOrder: number[]
  /** one per state, in state order */
  equations: EquationDecl[]
  outputs: OutputDecl[]
  delays: DelayInfo[]
  /** switch positions read by the equations, changed only by events */
  modes: ModeDecl[]
  /** events in sheet order */
  events: EventDecl[]
  /** parts the sheet declares and every part version it holds (sheets with parts only) */
  parts?: { name: string; handle: string; version: number; description: string; line: number; inputs: { name: string; unit: string }[]; outputs: { name: string; unit: string }[] }[]
  partsUsed?: { handle: string; version: number }[]
}
