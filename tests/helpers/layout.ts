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
