/** Spelling help for error messages (an unknown name → "did you mean …?"), used by the sheet language and the fit's column matching. */
/** Edit distance (Levenshtein 1966, "Binary codes capable of correcting deletions, insertions and reversals"). */
export function editDistance(a: string, b: string): number {
  if (a === b) return 0
  if (a.length > 64 || b.length > 64) return Math.max(a.length, b.length)
  const prev = new Array<number>(b.length + 1)
  const cur = new Array<number>(b.length + 1)
  for (let j = 0; j <= b.length; j++) prev[j] = j
  for (let i = 1; i <= a.length; i++) {
    cur[0] = i
    for (let j = 1; j <= b.length; j++) {
      const cost = a[i - 1] === b[j - 1] ? 0 : 1
      cur[j] = Math.min(prev[j] + 1, cur[j - 1] + 1, prev[j - 1] + cost)
    }
    for (let j = 0; j <= b.length; j++) prev[j] = cur[j]
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
