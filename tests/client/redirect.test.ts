import { describe, expect, it } from 'vitest'
import { safeRedirect } from '../../src/router/redirect'

describe('safeRedirect (the ?redirect= target after sign-in)', () => {
  it('keeps a path inside the app, with its query and hash', () => {
    expect(safeRedirect('/w/tinmoor/runs?page=2#top')).toBe('/w/tinmoor/runs?page=2#top')
    expect(safeRedirect(['/w/tinmoor/data', '/other'])).toBe('/w/tinmoor/data')
  })

  it('refuses anything that could leave the site', () => {
    for (const bad of ['https://evil.example/', '//evil.example/x', '/\\evil.example', 'javascript:alert(1)', 'w/tinmoor', '/w/\nx']) {
      expect(safeRedirect(bad), bad).toBeNull()
    }
  })

  it('refuses missing values and loops back to the sign-in pages', () => {
    expect(safeRedirect(undefined)).toBeNull()
    expect(safeRedirect(null)).toBeNull()
    expect(safeRedirect(42)).toBeNull()
    expect(safeRedirect('/signin')).toBeNull()
    expect(safeRedirect('/signup?redirect=/w/x')).toBeNull()
  })
})
