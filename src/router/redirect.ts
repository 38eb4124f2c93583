/**
 * The `?redirect=` target after sign-in: only a path inside this app, never another origin
 * (`//host`, `/\host`, `https://…`), and never back to the sign-in pages themselves.
 */
export function safeRedirect(raw: unknown): string | null {
  const value = Array.isArray(raw) ? raw[0] : raw
  if (typeof value !== 'string') return null
  if (!value.startsWith('/')) return null
  if (value.startsWith('//') || value.startsWith('/\\')) return null
  // eslint-disable-next-line no-control-regex -- control characters are what this check refuses
  if (/[\u0000-\u001f]/.test(value)) return null
  const path = value.split(/[?#]/, 1)[0]!
  if (path === '/signin' || path === '/signup') return null
  return value
}
