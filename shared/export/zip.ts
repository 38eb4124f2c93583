/**
 * A minimal ZIP writer: stored (uncompressed) entries with CRC-32, local headers, central directory
 * and end record, as laid down in PKWARE's APPNOTE.TXT (version 6.3.10, Sec. 4.3.7 local file
 * header, 4.3.12 central directory header, 4.3.16 end of central directory record, 4.4.5 method 0
 * "stored"). CRC-32 with the reflected polynomial 0xEDB88320 (ISO 3309 / ITU-T V.42), table-driven.
 * Names are UTF-8 (general-purpose flag bit 11). The timestamp is fixed (1980-01-01 00:00) so that the
 * same content gives the same bytes. No ZIP64: entries and archive stay below 4 GiB.
 */
export interface ZipEntry {
  name: string
  data: Uint8Array | string
}

let table: Uint32Array | null = null

export function crc32(data: Uint8Array): number {
  if (!table) {
    table = new Uint32Array(256)
    for (let n = 0; n < 256; n++) {
      let c = n
      for (let k = 0; k < 8; k++) c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1
      table[n] = c >>> 0
    }
  }
  let c = 0xffffffff
  for (let i = 0; i < data.length; i++) c = table[(c ^ data[i]) & 0xff] ^ (c >>> 8)
  return (c ^ 0xffffffff) >>> 0
}

const DOS_TIME = 0
const DOS_DATE = (0 << 9) | (1 << 5) | 1 // 1980-01-01

interface StoredFile { name: Uint8Array; data: Uint8Array; crc: number }

/**
 * The fields a local file header and its central directory header share, from "version needed to
 * extract" to "extra field length" (APPNOTE 4.3.7 at offset 4, 4.3.12 at offset 6), written at o.
 */
function sharedFields(dv: DataView, o: number, f: StoredFile): void {
  dv.setUint16(o, 20, true) // version needed: 2.0
  dv.setUint16(o + 2, 0x0800, true) // UTF-8 names
  dv.setUint16(o + 4, 0, true) // stored
  dv.setUint16(o + 6, DOS_TIME, true)
  dv.setUint16(o + 8, DOS_DATE, true)
  dv.setUint32(o + 10, f.crc, true)
  dv.setUint32(o + 14, f.data.length, true) // compressed size
  dv.setUint32(o + 18, f.data.length, true) // uncompressed size
  dv.setUint16(o + 22, f.name.length, true)
  dv.setUint16(o + 24, 0, true) // extra field length
}

export function zipStore(entries: ZipEntry[]): Uint8Array {
  const enc = new TextEncoder()
  const files: StoredFile[] = entries.map((e) => {
    const name = enc.encode(e.name)
    const data = typeof e.data === 'string' ? enc.encode(e.data) : e.data
    return { name, data, crc: crc32(data) }
  })
  const localSize = files.reduce((s, f) => s + 30 + f.name.length + f.data.length, 0)
  const centralSize = files.reduce((s, f) => s + 46 + f.name.length, 0)
  const out = new Uint8Array(localSize + centralSize + 22)
  const dv = new DataView(out.buffer)
  let o = 0
  const offsets: number[] = []
  for (const f of files) {
    offsets.push(o)
    dv.setUint32(o, 0x04034b50, true)
    sharedFields(dv, o + 4, f)
    out.set(f.name, o + 30)
    out.set(f.data, o + 30 + f.name.length)
    o += 30 + f.name.length + f.data.length
  }
  const cdStart = o
  files.forEach((f, i) => {
    dv.setUint32(o, 0x02014b50, true)
    dv.setUint16(o + 4, 20, true) // made by: 2.0, MS-DOS attributes
    sharedFields(dv, o + 6, f)
    dv.setUint16(o + 32, 0, true) // comment
    dv.setUint16(o + 34, 0, true) // disk
    dv.setUint16(o + 36, 0, true) // internal attributes
    dv.setUint32(o + 38, 0, true) // external attributes
    dv.setUint32(o + 42, offsets[i], true)
    out.set(f.name, o + 46)
    o += 46 + f.name.length
  })
  dv.setUint32(o, 0x06054b50, true)
  dv.setUint16(o + 4, 0, true)
  dv.setUint16(o + 6, 0, true)
  dv.setUint16(o + 8, files.length, true)
  dv.setUint16(o + 10, files.length, true)
  dv.setUint32(o + 12, o - cdStart, true)
  dv.setUint32(o + 16, cdStart, true)
  dv.setUint16(o + 20, 0, true)
  return out
}
