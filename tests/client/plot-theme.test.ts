/**
 * The plot theme is read from the CSS variables of src/assets/main.css: every colour a chart uses
 * resolves to a colour of the palette (this test resolves `var(--…)` chains from the stylesheet itself),
 * and no plotting module repeats a hex colour.
 */
import { readFileSync, readdirSync } from 'node:fs'
import path from 'node:path'
import { describe, expect, it } from 'vitest'
import { baseLayout, PLOT_SERIES_COUNT, readPlotTheme } from '../../src/composables/plotTheme'

const css = readFileSync('src/assets/main.css', 'utf8')
const root = css.slice(css.indexOf(':root {'), css.indexOf('\n}', css.indexOf(':root {')))
const vars = new Map([...root.matchAll(/(--[\w-]+):\s*([^;]+);/g)].map((m) => [m[1], m[2].trim()]))
const resolve = (name: string, depth = 0): string => {
  const v = vars.get(name) ?? ''
  const ref = /^var\((--[\w-]+)\)$/.exec(v)
  return ref && depth < 10 ? resolve(ref[1], depth + 1) : v
}

describe('plot theme', () => {
  const theme = readPlotTheme(resolve)

  it('takes its colours from the palette variables', () => {
    expect(theme.palette).toHaveLength(PLOT_SERIES_COUNT)
    for (const c of [...theme.palette, theme.grid, theme.paper, theme.background, theme.text, theme.muted]) expect(c).toMatch(/^#[0-9a-f]{6}$/)
    expect(new Set(theme.palette).size).toBe(PLOT_SERIES_COUNT)
    expect(theme.palette[0]).toBe(resolve('--pw-accent')) // the first series is the accent
    expect(theme.band).toMatch(/^rgb\(/)
    expect(theme.font).toContain('Fira Sans')
  })

  it('builds the base layout every chart starts from', () => {
    const l = baseLayout(theme, 300) as { height: number; paper_bgcolor: string; xaxis: { gridcolor: string }; font: { color: string } }
    expect(l.height).toBe(300)
    expect(l.paper_bgcolor).toBe(theme.paper)
    expect(l.xaxis.gridcolor).toBe(theme.grid)
    expect(l.font.color).toBe(theme.text)
  })

  it('leaves no hex colour in the modules that draw plots', () => {
    const plotting = ['src/components/PlotlyChart.vue', 'src/components/QuickSimulationPanel.vue', 'src/components/RunPlots.vue', 'src/components/HandoverPanel.vue', 'src/views/RunView.vue', 'src/views/DatasetView.vue']
    for (const f of plotting) expect(readFileSync(f, 'utf8'), f).not.toMatch(/['"]#[0-9a-fA-F]{3,6}['"]|rgba?\(\d/)
    // and every view or component naming a colour does so through a variable
    const dirs = ['src/views', 'src/components']
    const offenders = dirs.flatMap((d) => readdirSync(d).map((f) => path.join(d, f)))
      .filter((f) => f.endsWith('.vue') && /['"]#[0-9a-fA-F]{6}['"]/.test(readFileSync(f, 'utf8')))
    // the logo's mark and the editor's Monaco decorations take literal colours (Monaco reads no CSS variables)
    expect(offenders.filter((f) => !['src/components/SheetEditor.vue', 'src/components/PewterLogo.vue'].includes(f))).toEqual([])
  })
})
