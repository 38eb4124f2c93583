import { and, desc, eq, inArray, isNull, lt, or } from 'drizzle-orm'
import type { Db } from '../db/client'
import { auditLog, memberships, users } from '../db/schema'
import type { AuditEntryDto } from '../../shared/api/team'

export type AuditAction =
  | 'auth.signin' | 'auth.signin_failed' | 'auth.signup' | 'auth.signout' | 'auth.password_reset'
  | 'member.invited' | 'member.joined' | 'member.role_changed' | 'member.removed'
  | 'member.invitation_revoked' | 'auth.password_reset_requested'
  | 'auth.signup_requested' | 'auth.signup_existing' | 'auth.email_verified'
  | 'workspace.settings_changed'
  | 'model.created' | 'model.published' | 'model.approved' | 'model.review-requested' | 'model.changes-requested' | 'model.forked' | 'model.deleted'
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

/**
 * A workspace's audit trail, newest first: its own events plus the account events (sign-in, failed
 * sign-in, password reset) of its current members, which carry no workspace.
 */
export async function listAudit(db: Db, workspaceId: number, q: { limit: number; before?: number; action?: string }): Promise<AuditEntryDto[]> {
  const rows = await db
    .select({
      id: auditLog.id, action: auditLog.action, target: auditLog.target, details: auditLog.details, ip: auditLog.ip, createdAt: auditLog.createdAt,
      actorId: users.id, actorName: users.name, actorEmail: users.email,
    })
    .from(auditLog).leftJoin(users, eq(users.id, auditLog.actorId))
    .where(and(
      or(
        eq(auditLog.workspaceId, workspaceId),
        and(isNull(auditLog.workspaceId), inArray(auditLog.actorId,
          db.select({ id: memberships.userId }).from(memberships).where(eq(memberships.workspaceId, workspaceId)))),
      ),
      q.before ? lt(auditLog.id, q.before) : undefined,
      q.action ? eq(auditLog.action, q.action) : undefined,
    ))
    .orderBy(desc(auditLog.id))
    .limit(q.limit)
  return rows.map((r) => ({
    id: r.id, action: r.action, target: r.target, details: r.details ?? null, ip: r.ip, createdAt: r.createdAt.toISOString(),
    actor: r.actorId ? { id: r.actorId, name: r.actorName!, email: r.actorEmail! } : null,
  }))
}
