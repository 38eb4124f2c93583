/**
 * The one way the client loads Plotly: lazily, and the smaller cartesian bundle
 * (plotly.js-cartesian-dist-min: bar, box, contour, heatmap, histogram, histogram2d,
 * histogram2dcontour, image, pie, scatter, scatterternary, violin) whenever every trace of a chart is
 * one of its types; the full bundle only for a chart that needs more (WebGL `scattergl` for long
 * traces). Each bundle is fetched once per page load.
 */
export interface PlotlyLike {
  react: (el: object, data: unknown[], layout: unknown, config: unknown) => Promise<unknown>
  purge: (el: object) => void
}

export const CARTESIAN_TRACE_TYPES: ReadonlySet<string> = new Set([
  'bar', 'box', 'contour', 'heatmap', 'histogram', 'histogram2d', 'histogram2dcontour', 'image', 'pie', 'scatter', 'scatterternary', 'violin',
])

/** True when every trace's type (Plotly's default is scatter) is in the cartesian bundle. */
export function cartesianCovers(data: readonly unknown[]): boolean {
  return data.every((d) => {
    const type = (d as { type?: unknown } | null)?.type
    return type === undefined || (typeof type === 'string' && CARTESIAN_TRACE_TYPES.has(type))
  })
}

let cartesian: Promise<PlotlyLike> | null = null
let full: Promise<PlotlyLike> | null = null

const unwrap = (m: { default?: unknown }) => (m.default ?? m) as PlotlyLike

/** The Plotly bundle that draws `data`. */
export function loadPlotly(data: readonly unknown[]): Promise<PlotlyLike> {
  if (cartesianCovers(data)) {
    cartesian ??= import('plotly.js-cartesian-dist-min').then(unwrap)
    return cartesian
  }
  full ??= import('plotly.js-dist-min').then(unwrap)
  return full
}

export function usePlotly() {
  return { loadPlotly, cartesianCovers }
}
