import 'express-serve-static-core'
import 'express-session'
import type { Role } from '../shared/api/auth'

declare module 'express-session' {
  interface SessionData {
    userId?: number
  }
}

declare module 'express-serve-static-core' {
  interface Request {
    /** who is calling: set by the auth middleware from the session cookie or a bearer token */
    auth?: { userId: number; via: 'session' | 'token'; tokenId?: number; tokenWorkspaceId?: number; tokenRole?: Role }
    /** the workspace of a /api/workspaces/:ws/… route, with the caller's effective role */
    workspace?: { id: number; slug: string; name: string; role: Role }
  }
}
