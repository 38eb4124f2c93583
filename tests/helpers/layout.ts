/**
 * Layout checks for the browser tests, evaluated in the page (as strings: the tests are type-checked
 * without the DOM library).
 */
import type { Page } from 'playwright-core'

/**
 * The elements reaching past the right edge of the window, outermost first (empty: the page does not
 * scroll sideways). Element Plus tables lay themselves out again after a resize, so poll this.
 */
export const overflowing = (page: Page) => page.evaluate(`(() => {
  if (document.documentElement.scrollWidth <= window.innerWidth) return []
  const w = window.innerWidth + 1
  return [...document.querySelectorAll('body *')]
    .filter((el) => el.getBoundingClientRect().right > w && !(el.parentElement && el.parentElement.getBoundingClientRect().right > w))
    .slice(0, 8)
    .map((el) => el.tagName.toLowerCase() + '.' + [...el.classList].join('.') + ' (' + Math.round(el.getBoundingClientRect().right) + ' px)')
})()`) as Promise<string[]>

/**
 * Legends lying over a chart's plotting area, an axis title or the chart title, for every Plotly chart
 * of the page (`found` names each, empty when clear), and how many legends were looked at.
 */
export const legendOverlaps = (page: Page) => page.evaluate(`(() => {
  const hit = (a, b) => Math.min(a.right, b.right) - Math.max(a.left, b.left) > 1 && Math.min(a.bottom, b.bottom) - Math.max(a.top, b.top) > 1
  const found = []
  let legends = 0
  document.querySelectorAll('.plotly-chart').forEach((chart, k) => {
    const legend = chart.querySelector('g.legend')
    if (!legend) return
    legends++
    const lr = legend.getBoundingClientRect()
    chart.querySelectorAll('.draglayer .nsewdrag, .g-xtitle, .g-ytitle, .gtitle').forEach((el) => {
      if (hit(lr, el.getBoundingClientRect())) found.push((chart.getAttribute('aria-label') || 'chart ' + k) + ': legend over ' + el.getAttribute('class'))
    })
  })
  return { found, legends }
})()`) as Promise<{ found: string[]; legends: number }>
