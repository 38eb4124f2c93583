// The Plotly loader picks the cartesian bundle only when it has every trace type of a chart.
// The list of the cartesian bundle's trace modules is the one in plotly.js-cartesian-dist-min's README.
import { readFileSync } from 'node:fs'
import { describe, expect, it } from 'vitest'
import { CARTESIAN_TRACE_TYPES, cartesianCovers } from '../../src/composables/usePlotly'

describe('the Plotly loader', () => {
  it('knows exactly the trace modules the cartesian bundle contains', () => {
    const readme = readFileSync('node_modules/plotly.js-cartesian-dist-min/README.md', 'utf8')
    const line = readme.split('\n').find((l) => l.startsWith('Contains trace modules')) ?? ''
    const listed = [...line.matchAll(/`([a-z0-9]+)`/g)].map((m) => m[1]).sort()
    expect(listed.length).toBeGreaterThan(5)
    expect([...CARTESIAN_TRACE_TYPES].sort()).toEqual(listed)
  })

  it('uses the cartesian bundle for scatter, bar, heatmap and contour charts, the full one for WebGL traces', () => {
    expect(cartesianCovers([{ type: 'scatter' }, { type: 'bar' }, { type: 'heatmap' }, { type: 'contour' }, {}])).toBe(true)
    expect(cartesianCovers([{ type: 'scatter' }, { type: 'scattergl' }])).toBe(false)
    expect(cartesianCovers([{ type: 'surface' }])).toBe(false)
  })
})
