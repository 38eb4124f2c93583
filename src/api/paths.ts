/** The path of a workspace's routes, and the option that keeps the 404 of a single thing quiet (the page shows "not found" itself). */
export const workspacePath = (ws: string) => `/api/workspaces/${encodeURIComponent(ws)}`
export const quietNotFound = { silent: [404] } as const
