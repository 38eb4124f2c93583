/** Spelling help for error messages (an unknown name → "did you mean …?"), used by the sheet language and the fit's column matching. */
/**
 * Edit distance with adjacent transpositions counted as one edit (the "optimal string alignment"
 * form of Damerau 1964, "A technique for computer detection and correction of spelling errors",
 * CACM 7(3); insertions, deletions and substitutions as in Levenshtein 1966, "Binary codes capable
 * of correcting deletions, insertions and reversals"), so `inptu` is one edit from `input`.
 */
export function editDistance(a: string, b: string): number {
  if (a === b) return 0
  if (a.length > 64 || b.length > 64) return Math.max(a.length, b.length)
  const n = b.length + 1
  let before = new Array<number>(n).fill(0)
  let prev = new Array<number>(n)
  let cur = new Array<number>(n)
  for (let j = 0; j < n; j++) prev[j] = j
  for (let i = 1; i <= a.length; i++) {
    cur[0] = i
    for (let j = 1; j < n; j++) {
      const cost = a[i - 1] === b[j - 1] ? 0 : 1
      let v = Math.min(prev[j] + 1, cur[j - 1] + 1, prev[j - 1] + cost)
      if (i > 1 && j > 1 && a[i - 1] === b[j - 2] && a[i - 2] === b[j - 1]) v = Math.min(v, before[j - 2] + 1)
      cur[j] = v
    }
    const t = before
    before = prev
    prev = cur
    cur = t
  }
  return prev[b.length]
}

/** The closest candidate within a small edit distance (case differences count as near), or null. */
export function closest(name: string, candidates: Iterable<string>): string | null {
  let best: string | null = null
  let bestD = Infinity
  const limit = name.length <= 1 ? 0.5 : Math.max(1, Math.min(3, Math.floor(name.length / 3)))
  for (const c of candidates) {
    const d = c.toLowerCase() === name.toLowerCase() ? 0.5 : editDistance(name, c)
    if (d < bestD) { bestD = d; best = c }
  }
  return best !== null && bestD <= limit ? best : null
}

export function didYouMean(name: string, candidates: Iterable<string>): string {
  const c = closest(name, candidates)
  return c ? ` (did you mean '${c}'?)` : ''
}
