/**
 * Leading `# …` comment lines of a trace file, kept as the dataset's notes (the demo files say there
 * that their data are invented), split from the CSV text that follows. Used by the server's upload and
 * by the client's import preview, so both read the same rows.
 */
export interface SplitNotes {
  /** the CSV text without the leading comment lines */
  text: string
  notes: string[]
  /** lines removed before the header (so row numbers can be reported against the file) */
  skippedLines: number
}

export function splitNotes(text: string): SplitNotes {
  const lines = text.split(/\r\n|\n|\r/)
  const notes: string[] = []
  let skipped = 0
  while (skipped < lines.length && (lines[skipped].startsWith('#') || (lines[skipped].trim() === '' && notes.length > 0 && skipped < lines.length - 1 && lines[skipped + 1].startsWith('#')))) {
    const l = lines[skipped]
    if (l.startsWith('#')) notes.push(l.replace(/^#+\s?/, '').trimEnd())
    skipped++
  }
  return { text: lines.slice(skipped).join('\n'), notes, skippedLines: skipped }
}
