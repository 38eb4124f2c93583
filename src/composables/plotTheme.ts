/**
 * The plot theme's pure part: Plotly colours from the CSS variables of assets/main.css (`--pw-plot-*`),
 * given a reader of variables (the page's computed style in usePlotTheme; main.css itself in the tests),
 * and the base layout every chart starts from.
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

/** A theme colour (#rrggbb, #rgb or rgb(r g b) / rgb(r, g, b)) at the given opacity, as rgba(). */
export function translucent(colour: string, alpha: number): string {
  const c = colour.trim()
  let rgb: number[] | null = null
  const hex = /^#([0-9a-f]{3}|[0-9a-f]{6})$/i.exec(c)
  if (hex) {
    const h = hex[1].length === 3 ? hex[1].split('').map((d) => d + d).join('') : hex[1]
    rgb = [0, 2, 4].map((k) => parseInt(h.slice(k, k + 2), 16))
  } else {
    const m = /^rgba?\(\s*([\d.]+)[\s,]+([\d.]+)[\s,]+([\d.]+)/i.exec(c)
    if (m) rgb = [m[1], m[2], m[3]].map(Number)
  }
  return rgb ? `rgba(${rgb.join(',')},${alpha})` : c
}

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

/** The base layout every chart starts from (fonts, frame, grid, legend above the plotting area). */
export function baseLayout(t: PlotTheme, height: number): Record<string, unknown> {
  return {
    height,
    margin: { l: 64, r: 16, t: 36, b: 56 },
    font: { family: t.font, size: 12, color: t.text },
    paper_bgcolor: t.paper,
    plot_bgcolor: t.background,
    // a horizontal legend in the top margin, above the plotting area: never over the data or the x-axis title
    legend: { orientation: 'h', x: 0, xanchor: 'left', y: 1.02, yanchor: 'bottom' },
    xaxis: { gridcolor: t.grid, zeroline: false },
    yaxis: { gridcolor: t.grid, zeroline: false },
  }
}
