/**
 * Plotly renders a subset of HTML in every label (links, <b>, <br>…). User text — CSV headers, dataset
 * names, run and model titles — reaches trace names, axis titles and category labels, so everything
 * shown as text is escaped (&, <, >) before it is handed to Plotly. Our own templates (hovertemplate,
 * texttemplate) are left as they are.
 */
export function escapePlotText(s: string): string {
  return s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;')
}

const TEXT_KEYS = new Set(['name', 'text', 'title', 'x', 'y', 'labels', 'legendgrouptitle', 'ticktext'])
const KEEP = new Set(['hovertemplate', 'texttemplate', 'colorscale', 'type', 'mode'])

function escapeDeep(v: unknown, depth: number): unknown {
  if (typeof v === 'string') return escapePlotText(v)
  if (depth > 6 || v === null || typeof v !== 'object') return v
  if (ArrayBuffer.isView(v)) return v
  if (Array.isArray(v)) return v.some((x) => typeof x === 'string' || (x !== null && typeof x === 'object')) ? v.map((x) => escapeDeep(x, depth + 1)) : v
  return escapeObject(v as Record<string, unknown>, depth + 1)
}

function escapeObject(o: Record<string, unknown>, depth: number): Record<string, unknown> {
  const out: Record<string, unknown> = {}
  for (const [k, v] of Object.entries(o)) {
    if (KEEP.has(k)) out[k] = v
    else if (TEXT_KEYS.has(k)) out[k] = escapeDeep(v, depth)
    else if (v !== null && typeof v === 'object' && !Array.isArray(v) && !ArrayBuffer.isView(v)) out[k] = escapeObject(v as Record<string, unknown>, depth + 1)
    else out[k] = v
  }
  return out
}

/** Traces and layout with every text field escaped (axes, titles, legends, annotations, categories). */
export function usePlotText() {
  return {
    escapeTraces: (data: unknown[]) => data.map((t) => (t && typeof t === 'object' ? escapeObject(t as Record<string, unknown>, 0) : t)),
    escapeLayout: (layout: Record<string, unknown>) => {
      const l = escapeObject(layout, 0)
      if (Array.isArray(layout.annotations)) l.annotations = layout.annotations.map((a) => (a && typeof a === 'object' ? escapeObject(a as Record<string, unknown>, 0) : a))
      return l
    },
  }
}
