/**
 * API tokens for the CLI and automation: bound to one workspace, with a role no higher than the
 * creator's there; the secret is shown once at creation, only its SHA-256 is stored. Sent as
 * `Authorization: Bearer pwt_…`; the workspace middleware caps the caller's role at the token's.
 */
import { and, desc, eq, isNull, or, sql } from 'drizzle-orm'
import type { Db } from '../db/client'
import { apiTokens, users } from '../db/schema'
import { forbidden, notFound } from '../errors'
import { roleRank, type Role } from '../../shared/api/auth'
import type { ApiTokenDto, CreatedTokenReply, CreateTokenBody } from '../../shared/api/team'
import { hashSecret, newSecret } from './secrets'

export const TOKEN_PREFIX = 'pwt'

const columns = {
  id: apiTokens.id, name: apiTokens.name, role: apiTokens.role, prefix: apiTokens.prefix,
  ownerId: users.id, ownerName: users.name, lastUsedAt: apiTokens.lastUsedAt, revokedAt: apiTokens.revokedAt, createdAt: apiTokens.createdAt,
}
type Row = { id: number; name: string; role: string; prefix: string; ownerId: number; ownerName: string; lastUsedAt: Date | null; revokedAt: Date | null; createdAt: Date }
const dto = (r: Row): ApiTokenDto => ({
  id: r.id, name: r.name, role: r.role as Role, prefix: r.prefix, owner: { id: r.ownerId, name: r.ownerName },
  lastUsedAt: r.lastUsedAt?.toISOString() ?? null, revokedAt: r.revokedAt?.toISOString() ?? null, createdAt: r.createdAt.toISOString(),
})

export async function createToken(db: Db, ws: { id: number; role: Role }, userId: number, body: CreateTokenBody): Promise<CreatedTokenReply> {
  if (roleRank[body.role] > roleRank[ws.role]) {
    throw forbidden(`A token's role cannot be higher than yours: you are ${ws.role} here, the token asks for ${body.role}.`)
  }
  const token = newSecret(TOKEN_PREFIX)
  const [row] = await db.insert(apiTokens).values({
    userId, workspaceId: ws.id, name: body.name, role: body.role, prefix: token.slice(0, 12), tokenHash: hashSecret(token),
  }).returning({ id: apiTokens.id })
  const [full] = await db.select(columns).from(apiTokens).innerJoin(users, eq(users.id, apiTokens.userId)).where(eq(apiTokens.id, row.id))
  return { ...dto(full), token }
}

/** The caller's tokens in the workspace; an admin sees everyone's (to revoke them). */
export async function listTokens(db: Db, workspaceId: number, userId: number, admin: boolean): Promise<ApiTokenDto[]> {
  const rows = await db.select(columns).from(apiTokens).innerJoin(users, eq(users.id, apiTokens.userId))
    .where(and(eq(apiTokens.workspaceId, workspaceId), admin ? undefined : eq(apiTokens.userId, userId)))
    .orderBy(desc(apiTokens.createdAt))
  return rows.map(dto)
}

export async function revokeToken(db: Db, workspaceId: number, tokenId: number, userId: number, admin: boolean) {
  const r = await db.update(apiTokens).set({ revokedAt: sql`now()` })
    .where(and(eq(apiTokens.id, tokenId), eq(apiTokens.workspaceId, workspaceId), isNull(apiTokens.revokedAt),
      admin ? undefined : eq(apiTokens.userId, userId)))
    .returning({ id: apiTokens.id, name: apiTokens.name })
  if (!r.length) throw notFound('Token')
  return r[0]
}

/** Who a bearer token speaks for (the auth middleware's bearer branch), or null for an unknown or revoked one. */
export interface TokenCaller { userId: number; via: 'token'; tokenId: number; tokenWorkspaceId: number; tokenRole: Role }

export async function resolveApiToken(db: Db, token: string): Promise<TokenCaller | null> {
  if (!token.startsWith(`${TOKEN_PREFIX}_`)) return null
  const [row] = await db.select({ id: apiTokens.id, userId: apiTokens.userId, workspaceId: apiTokens.workspaceId, role: apiTokens.role, lastUsedAt: apiTokens.lastUsedAt })
    .from(apiTokens).where(and(eq(apiTokens.tokenHash, hashSecret(token)), isNull(apiTokens.revokedAt))).limit(1)
  if (!row) return null
  // record use at most once a minute per token
  await db.update(apiTokens).set({ lastUsedAt: sql`now()` })
    .where(and(eq(apiTokens.id, row.id), or(isNull(apiTokens.lastUsedAt), sql`${apiTokens.lastUsedAt} < now() - interval '1 minute'`)))
  return { userId: row.userId, via: 'token', tokenId: row.id, tokenWorkspaceId: row.workspaceId, tokenRole: row.role as Role }
}
