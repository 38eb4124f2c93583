/** The routes registered on an Express 5 app, found by walking its router stack (mounted routers included). */
import type { Express } from 'express'

interface Layer {
  rawPath?: string | string[]
  route?: { path: string; methods: Record<string, boolean> }
  handle?: { stack?: Layer[] }
}

const join = (a: string, b: string) => `${a}/${b}`.replace(/\/+/g, '/').replace(/(.)\/$/, '$1')

function walk(stack: Layer[], prefix: string, out: string[]) {
  for (const layer of stack) {
    if (layer.route) {
      for (const [method, on] of Object.entries(layer.route.methods)) {
        if (on && method !== '_all') out.push(`${method.toUpperCase()} ${join(prefix, layer.route.path)}`)
      }
    } else if (layer.handle?.stack) {
      const mount = typeof layer.rawPath === 'string' ? layer.rawPath : ''
      walk(layer.handle.stack, join(prefix, mount), out)
    }
  }
}

/** "GET /api/workspaces/:ws/projects", … in registration order, without duplicates. */
export function listRoutes(app: Express): string[] {
  const out: string[] = []
  walk((app as unknown as { router: { stack: Layer[] } }).router.stack, '', out)
  return [...new Set(out)]
}
