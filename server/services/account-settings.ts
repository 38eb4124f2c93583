/** A user's own settings (the Account page): for now whether a finished fit sends them an e-mail. */
import { eq } from 'drizzle-orm'
import type { Db } from '../db/client'
import { users } from '../db/schema'
import { notFound } from '../errors'
import type { SettingsDto } from '../../shared/api/team'

export async function getSettings(db: Db, userId: number): Promise<SettingsDto> {
  const [u] = await db.select({ notifyOnFit: users.notifyOnFit }).from(users).where(eq(users.id, userId))
  if (!u) throw notFound('User')
  return u
}

export async function updateSettings(db: Db, userId: number, body: SettingsDto): Promise<SettingsDto> {
  const [u] = await db.update(users).set({ notifyOnFit: body.notifyOnFit }).where(eq(users.id, userId)).returning({ notifyOnFit: users.notifyOnFit })
  if (!u) throw notFound('User')
  return u
}
