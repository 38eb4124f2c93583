// User text handed to Plotly is escaped: a CSV header or dataset name with HTML shows as text, not a link.
import { describe, expect, it } from 'vitest'
import { escapePlotText, usePlotText } from '../../src/composables/usePlotText'

describe('plot text escaping', () => {
  it('escapes &, < and > in names, axis titles, categories and annotations; keeps our templates and numbers', () => {
    const evil = '<a href="https://example.invalid">level</a> & more'
    const { escapeTraces, escapeLayout } = usePlotText()
    const [trace] = escapeTraces([{ name: evil, x: [1, 2], y: new Float64Array([3, 4]), hovertemplate: '%{y}<extra></extra>', type: 'scatter' }]) as Record<string, unknown>[]
    expect(trace.name).toBe('&lt;a href="https://example.invalid"&gt;level&lt;/a&gt; &amp; more')
    expect(trace.hovertemplate).toBe('%{y}<extra></extra>')
    expect(trace.x).toEqual([1, 2])
    expect(trace.y).toBeInstanceOf(Float64Array)
    const [heat] = escapeTraces([{ z: [[1]], x: ['<b>k</b>'], y: ['<i>tau</i>'], type: 'heatmap' }]) as Record<string, unknown>[]
    expect(heat.x).toEqual(['&lt;b&gt;k&lt;/b&gt;'])
    expect(heat.y).toEqual(['&lt;i&gt;tau&lt;/i&gt;'])
    const layout = escapeLayout({ title: { text: evil }, yaxis: { title: { text: '<br>m' } }, annotations: [{ text: '<b>x</b>', x: 1 }] })
    expect((layout.title as { text: string }).text).not.toContain('<')
    expect(((layout.yaxis as { title: { text: string } }).title.text)).toBe('&lt;br&gt;m')
    expect((layout.annotations as { text: string }[])[0].text).toBe('&lt;b&gt;x&lt;/b&gt;')
    expect(escapePlotText('a<b>&c')).toBe('a&lt;b&gt;&amp;c')
  })
})
