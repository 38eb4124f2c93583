/**
 * Splits CSV text into records of fields in one pass over the characters (linear in the file size):
 * RFC 4180 (Y. Shafranovich, "Common Format and MIME Type for Comma-Separated Values (CSV) Files",
 * IETF RFC 4180, 2005, Sec. 2) — fields separated by the delimiter, records by CRLF or LF (a lone CR
 * too), a field in double quotes may hold delimiters, line breaks and doubled quotes (""). Unquoted
 * fields are taken as they are (no trimming). An unterminated quote runs to the end of the text.
 *
 * Fields are kept as offsets into the text in typed arrays (grown by doubling), not as strings: a cell
 * becomes a string only when it is read, and dies young, so a 100 000-row file does not fill the old
 * heap with half a million strings that the collector then has to trace.
 */
export class CsvRecords {
  /** number of records */
  count = 0
  private recStart = new Int32Array(1024)
  private fStart = new Int32Array(4096)
  private fEnd = new Int32Array(4096)
  /** 1 when the field was quoted (its text lies between the quotes, "" still doubled) */
  private fQuoted = new Uint8Array(4096)
  private nFields = 0

  constructor(private readonly text: string, delimiter: string) {
    this.scan(delimiter.charCodeAt(0))
  }

  /** number of fields of record r */
  width(r: number): number {
    return (r + 1 < this.count ? this.recStart[r + 1] : this.nFields) - this.recStart[r]
  }

  /** field c of record r as a string */
  cell(r: number, c: number): string {
    const f = this.recStart[r] + c
    const s = this.text.slice(this.fStart[f], this.fEnd[f])
    return this.fQuoted[f] ? s.replace(/""/g, '"') : s
  }

  /** every field of record r */
  cells(r: number): string[] {
    const w = this.width(r)
    const out = new Array<string>(w)
    for (let c = 0; c < w; c++) out[c] = this.cell(r, c)
    return out
  }

  /** a record holding one empty field (a blank line) */
  isBlank(r: number): boolean {
    if (this.width(r) !== 1) return false
    const f = this.recStart[r]
    for (let i = this.fStart[f]; i < this.fEnd[f]; i++) {
      const ch = this.text.charCodeAt(i)
      if (ch !== 32 && ch !== 9) return false
    }
    return true
  }

  private pushField(a: number, b: number, quoted: boolean): void {
    if (this.nFields === this.fStart.length) {
      const grow = <T extends Int32Array | Uint8Array>(x: T, make: (n: number) => T): T => {
        const y = make(x.length * 2)
        y.set(x)
        return y
      }
      this.fStart = grow(this.fStart, (n) => new Int32Array(n))
      this.fEnd = grow(this.fEnd, (n) => new Int32Array(n))
      this.fQuoted = grow(this.fQuoted, (n) => new Uint8Array(n))
    }
    this.fStart[this.nFields] = a
    this.fEnd[this.nFields] = b
    this.fQuoted[this.nFields] = quoted ? 1 : 0
    this.nFields++
  }

  private startRecord(): void {
    if (this.count === this.recStart.length) {
      const y = new Int32Array(this.recStart.length * 2)
      y.set(this.recStart)
      this.recStart = y
    }
    this.recStart[this.count++] = this.nFields
  }

  private scan(d: number): void {
    const text = this.text
    const n = text.length
    let i = 0
    if (n === 0) return
    this.startRecord()
    while (true) {
      let a: number
      let b: number
      let quoted = false
      if (text.charCodeAt(i) === 34) {
        quoted = true
        let j = i + 1
        while (j < n) {
          if (text.charCodeAt(j) === 34) {
            if (j + 1 < n && text.charCodeAt(j + 1) === 34) {
              j += 2
              continue
            }
            break
          }
          j++
        }
        a = i + 1
        b = Math.min(j, n)
        i = j + 1
        // text after the closing quote up to the next delimiter or line break is dropped (malformed)
        while (i < n) {
          const c = text.charCodeAt(i)
          if (c === d || c === 10 || c === 13) break
          i++
        }
      } else {
        let k = i
        while (k < n) {
          const c = text.charCodeAt(k)
          if (c === d || c === 10 || c === 13) break
          k++
        }
        a = i
        b = k
        i = k
      }
      this.pushField(a, b, quoted)
      if (i >= n) return
      const c = text.charCodeAt(i)
      if (c === d) {
        i++
        if (i === n) {
          this.pushField(n, n, false)
          return
        }
        continue
      }
      i += c === 13 && i + 1 < n && text.charCodeAt(i + 1) === 10 ? 2 : 1
      if (i >= n) return
      this.startRecord()
    }
  }
}
