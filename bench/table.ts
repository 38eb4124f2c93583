/** Column padding for the benchmarks' printed tables. */

/** s filled with spaces on the right to width n (left-aligned column) */
export const pad = (s: string, n: number) => s.padEnd(n)
/** s filled with spaces on the left to width n (right-aligned column) */
export const lpad = (s: string, n: number) => s.padStart(n)
