/// <reference lib="dom" />
/**
 * The one plot theme: every chart's colours come from the CSS variables of assets/main.css, read once
 * from the page (plotTheme.ts holds the pure part), so no component repeats a colour.
 */
import { baseLayout, readPlotTheme, translucent, type PlotTheme } from './plotTheme'

let cached: PlotTheme | null = null

function documentTheme(): PlotTheme {
  if (!cached) {
    const style = getComputedStyle(document.documentElement)
    cached = readPlotTheme((name) => style.getPropertyValue(name))
  }
  return cached
}

export function usePlotTheme() {
  const t = documentTheme()
  return {
    ...t,
    /** the colour of series `i` (cycling through the palette) */
    series: (i: number) => t.palette[((i % t.palette.length) + t.palette.length) % t.palette.length],
    baseLayout: (height: number) => baseLayout(t, height),
    /** a colour at the given opacity (bands, shaded areas) */
    translucent,
  }
}
