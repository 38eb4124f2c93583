/**
 * The demo workspace, created on first start only. Tinmoor Works is an invented food-and-beverage
 * process plant; its people are invented too (no real company or person).
 */
import { and, eq, inArray, isNull } from 'drizzle-orm'
import type { Db } from './client'
import { memberships, users, workspaces } from './schema'
import { hashPassword } from '../auth/passwords'
import type { Role } from '../../shared/api/auth'

export const DEMO_WORKSPACE = { slug: 'tinmoor', name: 'Tinmoor Works (demo)' }
export const DEMO_PASSWORD = 'pewter-demo'
export const DEMO_USERS: { email: string; name: string; role: Role }[] = [
  { email: 'admin@tinmoor.example', name: 'Ada Tinmoor (admin)', role: 'admin' },
  { email: 'modeler@tinmoor.example', name: 'Moss Calder (modeler)', role: 'modeler' },
  { email: 'modeler2@tinmoor.example', name: 'Wren Halloway (modeler)', role: 'modeler' },
  { email: 'reviewer@tinmoor.example', name: 'Rook Ashby (reviewer)', role: 'reviewer' },
  { email: 'viewer@tinmoor.example', name: 'Vale Orrin (viewer)', role: 'viewer' },
]

/** Seeds the demo workspace when it does not exist yet; returns true when it seeded. */
export async function seedDemo(db: Db): Promise<boolean> {
  const existing = await db.select({ id: workspaces.id }).from(workspaces).where(eq(workspaces.slug, DEMO_WORKSPACE.slug)).limit(1)
  if (existing.length) {
    // installs seeded before addresses were confirmed: the demo addresses (reserved .example domain) count as confirmed
    await db.update(users).set({ emailVerifiedAt: new Date() })
      .where(and(inArray(users.email, DEMO_USERS.map((u) => u.email)), isNull(users.emailVerifiedAt)))
    return false
  }
  const passwordHash = await hashPassword(DEMO_PASSWORD)
  await db.transaction(async (tx) => {
    const [ws] = await tx.insert(workspaces).values(DEMO_WORKSPACE).returning()
    for (const u of DEMO_USERS) {
      const [row] = await tx.insert(users).values({ email: u.email, name: u.name, passwordHash, currentWorkspaceId: ws.id, emailVerifiedAt: new Date() }).returning()
      await tx.insert(memberships).values({ workspaceId: ws.id, userId: row.id, role: u.role })
    }
  })
  return true
}
