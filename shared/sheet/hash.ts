/**
 * Hash of a sheet's text: two 32-bit FNV-1a passes with different offset bases (Fowler, Noll,
 * Vo, "FNV hash", IETF draft-eastlake-fnv, 2019), giving 16 hex digits. A cache key, not a
 * cryptographic digest.
 */
export function hashText(text: string): string {
  let h1 = 0x811c9dc5
  let h2 = 0x01000193 ^ 0x9e3779b9
  for (let i = 0; i < text.length; i++) {
    const c = text.charCodeAt(i)
    h1 = Math.imul(h1 ^ c, 0x01000193)
    h2 = Math.imul(h2 ^ c, 0x01000193) ^ (h2 >>> 15)
  }
  h1 = Math.imul(h1 ^ text.length, 0x01000193)
  return (h1 >>> 0).toString(16).padStart(8, '0') + (h2 >>> 0).toString(16).padStart(8, '0')
}
