/**
 * Conditioning of a dataset's samples: pure functions from one table to a new one (datasets are
 * immutable; services/datasets stores the result as a child dataset with the steps applied).
 *
 * - trim: keep samples with from ≤ t ≤ to.
 * - exclude: blank (null) the chosen columns inside each window; the fit skips empty output cells, and an
 *   input trace is interpolated across the blanked window.
 * - resample: linear interpolation onto t = t_first + k·step (a sample is null when either neighbour is).
 * - offset: subtract each column's first non-empty value ("initial") or its mean.
 * - outliers: the Hampel filter — a sample is an outlier when its modified z-score
 *   0.6745·|x − median| / MAD within a moving window of 2k+1 samples exceeds the threshold (3.5).
 *   Modified z-score and the 3.5 threshold: B. Iglewicz & D. C. Hoaglin, "How to Detect and Handle
 *   Outliers", ASQC 1993, Sec. 3.1; the moving-window form: R. K. Pearson, "Outliers in process modeling
 *   and identification", IEEE Trans. Control Systems Technology 10 (2002) 55–63 (from memory).
 *   Outliers are marked by blanking them (null), the rows listed in the step's details.
 */
import type { AppliedStep, ConditioningStep } from '../../shared/api/datasets'

export interface Table {
  /** seconds, strictly increasing */
  time: number[]
  /** column name → values (null: empty cell) */
  columns: Record<string, (number | null)[]>
  /** column order */
  order: string[]
}

export class ConditioningError extends Error {
  constructor(message: string) {
    super(message)
    this.name = 'ConditioningError'
  }
}

function checkColumns(t: Table, names: string[] | undefined, stepNo: number): string[] {
  if (!names) return t.order
  for (const n of names) {
    if (!(n in t.columns)) throw new ConditioningError(`step ${stepNo}: no column named '${n}' (columns: ${t.order.join(', ')})`)
  }
  return names
}

const fmt = (v: number) => String(Number(v.toPrecision(8)))

/** Most samples × window (× columns) one outlier step may process (common practice, no source: a few seconds of work). */
export const MAX_FILTER_WORK = 20_000_000

/** For each time, whether it lies in one of the windows [a, b]: windows sorted once, one sweep (n log n, not n × windows). */
function insideWindows(time: number[], windows: [number, number][]): Uint8Array {
  const w = windows.slice().sort((x, y) => x[0] - y[0])
  const out = new Uint8Array(time.length)
  let j = 0
  let reach = -Infinity // furthest end of the windows started so far
  for (let k = 0; k < time.length; k++) {
    const tt = time[k]
    while (j < w.length && w[j][0] <= tt) { if (w[j][1] > reach) reach = w[j][1]; j++ }
    if (tt <= reach) out[k] = 1
  }
  return out
}

export function applySteps(input: Table, steps: ConditioningStep[]): { table: Table; applied: AppliedStep[] } {
  let table = input
  const applied: AppliedStep[] = []
  steps.forEach((step, i) => {
    const r = applyStep(table, step, i + 1)
    table = r.table
    applied.push({ step, summary: r.summary, ...(r.details ? { details: r.details } : {}) })
  })
  return { table, applied }
}

function applyStep(t: Table, step: ConditioningStep, no: number): { table: Table; summary: string; details?: Record<string, unknown> } {
  switch (step.op) {
    case 'trim': {
      if (!(step.from < step.to)) throw new ConditioningError(`step ${no} (trim): 'from' (${step.from}) must be less than 'to' (${step.to})`)
      const keep: number[] = []
      t.time.forEach((v, k) => { if (v >= step.from && v <= step.to) keep.push(k) })
      if (keep.length < 2) throw new ConditioningError(`step ${no} (trim): the window ${fmt(step.from)}–${fmt(step.to)} s keeps ${keep.length} sample(s); at least 2 are needed`)
      const columns: Table['columns'] = {}
      for (const c of t.order) columns[c] = keep.map((k) => t.columns[c][k])
      return {
        table: { time: keep.map((k) => t.time[k]), columns, order: t.order },
        summary: `trimmed to ${fmt(step.from)}–${fmt(step.to)} s (${keep.length} of ${t.time.length} samples kept)`,
      }
    }
    case 'exclude': {
      const cols = checkColumns(t, step.columns, no)
      for (const [a, b] of step.windows) if (!(a < b)) throw new ConditioningError(`step ${no} (exclude): window [${a}, ${b}] must have from < to`)
      const columns: Table['columns'] = { ...t.columns }
      const inside = insideWindows(t.time, step.windows)
      let blanked = 0
      for (const c of cols) {
        const v = t.columns[c].slice()
        for (let k = 0; k < v.length; k++) if (inside[k] && v[k] !== null) { v[k] = null; blanked++ }
        columns[c] = v
      }
      return {
        table: { time: t.time, columns, order: t.order },
        summary: `excluded ${step.windows.map(([a, b]) => `${fmt(a)}–${fmt(b)} s`).join(', ')} from ${cols.length === t.order.length ? 'all columns' : cols.join(', ')} (${blanked} cells blanked)`,
        details: { blanked },
      }
    }
    case 'resample': {
      const t0 = t.time[0]
      const tEnd = t.time[t.time.length - 1]
      const n = Math.floor((tEnd - t0) / step.step + 1e-9) + 1
      if (n < 2) throw new ConditioningError(`step ${no} (resample): a step of ${fmt(step.step)} s leaves fewer than 2 samples over ${fmt(tEnd - t0)} s`)
      if (n > 1_000_000) throw new ConditioningError(`step ${no} (resample): a step of ${fmt(step.step)} s would make ${n} samples (at most 1 000 000)`)
      const time = new Array<number>(n)
      for (let k = 0; k < n; k++) time[k] = t0 + k * step.step
      const columns: Table['columns'] = {}
      for (const c of t.order) columns[c] = interpolate(t.time, t.columns[c], time)
      return { table: { time, columns, order: t.order }, summary: `resampled to a uniform step of ${fmt(step.step)} s (${n} samples)` }
    }
    case 'offset': {
      const cols = checkColumns(t, step.columns, no)
      const columns: Table['columns'] = { ...t.columns }
      const offsets: Record<string, number> = {}
      for (const c of cols) {
        const v = t.columns[c]
        const present = v.filter((x): x is number => x !== null)
        if (!present.length) throw new ConditioningError(`step ${no} (offset): column '${c}' has no values`)
        const off = step.mode === 'initial' ? present[0] : present.reduce((s, x) => s + x, 0) / present.length
        offsets[c] = off
        columns[c] = v.map((x) => (x === null ? null : x - off))
      }
      return {
        table: { time: t.time, columns, order: t.order },
        summary: `subtracted the ${step.mode === 'initial' ? 'initial value' : 'mean'} from ${cols.map((c) => `${c} (${fmt(offsets[c])})`).join(', ')}`,
        details: { offsets },
      }
    }
    case 'outliers': {
      const cols = checkColumns(t, step.columns, no)
      const work = t.time.length * (2 * step.halfWindow + 1) * cols.length
      if (work > MAX_FILTER_WORK) throw new ConditioningError(`step ${no} (outliers): ${t.time.length} samples × a window of ${2 * step.halfWindow + 1} × ${cols.length} column(s) = ${work} exceeds the limit of ${MAX_FILTER_WORK} for samples × window; use a smaller window, fewer columns or fewer samples`)
      const columns: Table['columns'] = { ...t.columns }
      const marked: Record<string, number[]> = {}
      let total = 0
      for (const c of cols) {
        const { values, rows } = hampel(t.columns[c], step.halfWindow, step.threshold)
        columns[c] = values
        if (rows.length) { marked[c] = rows; total += rows.length }
      }
      return {
        table: { time: t.time, columns, order: t.order },
        summary: `marked ${total} outlier(s) (Hampel filter, window ±${step.halfWindow} samples, modified z-score > ${step.threshold})`,
        details: { rows: marked },
      }
    }
  }
}

/** Linear interpolation of (x, y) at xs; null where a bracketing sample is null or xs is outside x. */
export function interpolate(x: number[], y: (number | null)[], xs: number[]): (number | null)[] {
  const out = new Array<number | null>(xs.length)
  let j = 0
  for (let k = 0; k < xs.length; k++) {
    const q = xs[k]
    while (j < x.length - 2 && x[j + 1] < q) j++
    if (q < x[0] - 1e-12 || q > x[x.length - 1] + 1e-9) { out[k] = null; continue }
    const a = y[j]
    const b = y[j + 1]
    if (Math.abs(q - x[j]) < 1e-12) { out[k] = a; continue }
    if (j + 1 < x.length && Math.abs(q - x[j + 1]) < 1e-9) { out[k] = b; continue }
    if (a === null || b === null) { out[k] = null; continue }
    const w = (q - x[j]) / (x[j + 1] - x[j])
    out[k] = a + w * (b - a)
  }
  return out
}

function median(v: number[]): number {
  const s = v.slice().sort((a, b) => a - b)
  const m = s.length >> 1
  return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2
}

/** Hampel filter: returns the values with outliers blanked and their 1-based data row numbers. */
export function hampel(v: (number | null)[], k: number, threshold: number): { values: (number | null)[]; rows: number[] } {
  const out = v.slice()
  const rows: number[] = []
  for (let i = 0; i < v.length; i++) {
    const x = v[i]
    if (x === null) continue
    const win: number[] = []
    for (let j = Math.max(0, i - k); j <= Math.min(v.length - 1, i + k); j++) { const y = v[j]; if (y !== null) win.push(y) }
    if (win.length < 3) continue
    const med = median(win)
    const mad = median(win.map((y) => Math.abs(y - med)))
    if (mad === 0) continue
    if ((0.6745 * Math.abs(x - med)) / mad > threshold) { out[i] = null; rows.push(i + 1) }
  }
  return { values: out, rows }
}
