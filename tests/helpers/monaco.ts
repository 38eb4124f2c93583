/**
 * Browser tests: moving the cursor of the focused Monaco editor. By model line through the editor's own
 * "go to line" (Ctrl+G), not by ArrowDown, which moves by screen line and so lands short of the line
 * when a long line wraps (the editor's width settles late on a busy machine).
 */
import type { Page } from 'playwright-core'

/** Puts the cursor at the start of a 1-based line, then `column − 1` characters to the right. */
export async function cursorAt(page: Page, line: number, column = 1): Promise<void> {
  await page.keyboard.press('Escape') // a completion list open would take the keys
  await page.keyboard.press('Control+g')
  const input = page.locator('.quick-input-widget input')
  await input.waitFor()
  await input.fill(`:${line}`)
  await page.keyboard.press('Enter')
  await input.waitFor({ state: 'hidden' })
  await page.keyboard.press('Home')
  await page.keyboard.press('Home') // twice: Monaco's first Home stops at the first non-blank
  for (let i = 1; i < column; i++) await page.keyboard.press('ArrowRight')
}
