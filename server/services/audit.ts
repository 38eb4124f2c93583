import type { Db } from '../db/client'
import { auditLog } from '../db/schema'

export type AuditAction =
  | 'auth.signin' | 'auth.signin_failed' | 'auth.signup' | 'auth.signout' | 'auth.password_reset'
  | 'member.invited' | 'member.joined' | 'member.role_changed' | 'member.removed'
  | 'model.created' | 'model.published' | 'model.approved' | 'model.forked' | 'model.deleted'
  | 'token.created' | 'token.revoked'
  | 'run.started' | 'run.cancelled'

export async function audit(db: Db, entry: { workspaceId?: number | null; actorId?: number | null; action: AuditAction; target?: string; details?: unknown; ip?: string }) {
  await db.insert(auditLog).values({
    workspaceId: entry.workspaceId ?? null,
    actorId: entry.actorId ?? null,
    action: entry.action,
    target: entry.target ?? null,
    details: entry.details ?? null,
    ip: entry.ip ?? null,
  })
}
