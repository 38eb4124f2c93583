/// <reference lib="dom" />
/**
 * The one plot theme: Plotly colours read from the CSS variables of assets/main.css (`--pw-plot-*`), so
 * every chart follows the palette and no component repeats a colour. `readPlotTheme` takes the variable
 * reader, so it is tested against main.css itself.
 */
export interface PlotTheme {
  font: string
  text: string
  muted: string
  paper: string
  background: string
  grid: string
  /** the fill of a confidence band around the first series */
  band: string
  /** series colours in order (measured/simulated, validation, further series) */
  palette: string[]
  /** signal colours: warnings (ochre), limits and errors (oxide) */
  warn: string
  danger: string
}

export const PLOT_SERIES_COUNT = 6

export function readPlotTheme(cssVar: (name: string) => string): PlotTheme {
  const v = (name: string) => cssVar(name).trim()
  return {
    font: v('--pw-font') || 'sans-serif',
    text: v('--pw-plot-text'),
    muted: v('--pw-plot-muted'),
    paper: v('--pw-plot-paper'),
    background: v('--pw-plot-bg'),
    grid: v('--pw-plot-grid'),
    band: v('--pw-plot-band'),
    palette: Array.from({ length: PLOT_SERIES_COUNT }, (_, i) => v(`--pw-plot-${i + 1}`)),
    warn: v('--pw-ochre'),
    danger: v('--pw-oxide'),
  }
}

let cached: PlotTheme | null = null

function documentTheme(): PlotTheme {
  if (!cached) {
    const style = getComputedStyle(document.documentElement)
    cached = readPlotTheme((name) => style.getPropertyValue(name))
  }
  return cached
}

/** The base layout every chart starts from (fonts, frame, grid, legend below). */
export function baseLayout(t: PlotTheme, height: number): Record<string, unknown> {
  return {
    height,
    margin: { l: 64, r: 16, t: 28, b: 64 },
    font: { family: t.font, size: 12, color: t.text },
    paper_bgcolor: t.paper,
    plot_bgcolor: t.background,
    legend: { orientation: 'h', x: 0, y: -0.18, yanchor: 'top' },
    xaxis: { gridcolor: t.grid, zeroline: false },
    yaxis: { gridcolor: t.grid, zeroline: false },
  }
}

export function usePlotTheme() {
  const t = documentTheme()
  return {
    ...t,
    /** the colour of series `i` (cycling through the palette) */
    series: (i: number) => t.palette[((i % t.palette.length) + t.palette.length) % t.palette.length],
    baseLayout: (height: number) => baseLayout(t, height),
  }
}
