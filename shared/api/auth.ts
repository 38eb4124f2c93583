import { z } from 'zod'
import { PASSWORD_MAX_BYTES, utf8Length, visibleText } from './text'

export const roles = ['admin', 'modeler', 'reviewer', 'viewer'] as const
export const roleSchema = z.enum(roles)
export type Role = z.infer<typeof roleSchema>

/** What each role may do; the server checks these, the client hides what a role cannot do. */
export const roleRank: Record<Role, number> = { viewer: 0, reviewer: 1, modeler: 2, admin: 3 }
export const can = {
  read: (_r: Role) => true,
  write: (r: Role) => r === 'admin' || r === 'modeler',
  approve: (r: Role) => r === 'admin' || r === 'reviewer',
  administer: (r: Role) => r === 'admin',
}

export const emailSchema = z.string().trim().toLowerCase().email().max(254)
export const passwordSchema = z.string().min(8, 'at least 8 characters')
  .refine((p) => utf8Length(p) <= PASSWORD_MAX_BYTES, `at most ${PASSWORD_MAX_BYTES} bytes (bcrypt ignores anything longer; accented letters take 2 bytes, most symbols 3)`)

/** A person's display name. */
export const personName = visibleText('the name', 120, 'enter your name')

export const signupBody = z.object({
  email: emailSchema,
  password: passwordSchema,
  name: personName,
})
export type SignupBody = z.infer<typeof signupBody>

/** The same 202 reply for a new and a known address. */
export const signupReply = z.object({ message: z.string() })
export const SIGNUP_MESSAGE = 'Check your mail: a message with a link to confirm the address is on its way. The account is created when you follow it.'

/** What the verification page shows before confirming (GET /api/auth/verify-email/:token). */
export const verificationPreview = z.object({
  email: z.string(),
  /** a sign-up link: the password chosen at sign-up creates the account */
  signup: z.boolean(),
})
export type VerificationPreview = z.infer<typeof verificationPreview>

export const verifyEmailBody = z.object({ password: z.string().min(1).max(1000).optional() })

export const signinBody = z.object({
  email: emailSchema,
  password: z.string().min(1).max(200),
})
export type SigninBody = z.infer<typeof signinBody>

export const switchWorkspaceBody = z.object({ workspaceId: z.coerce.number().int().positive() })

export const userDto = z.object({
  id: z.number(),
  email: z.string(),
  name: z.string(),
  /** the owner followed a link mailed to the address; unconfirmed accounts cannot accept invitations */
  emailVerified: z.boolean(),
})

export const workspaceMembershipDto = z.object({
  id: z.number(),
  slug: z.string(),
  name: z.string(),
  role: roleSchema,
})
export type WorkspaceMembershipDto = z.infer<typeof workspaceMembershipDto>

export const meReply = z.object({
  user: userDto,
  workspaces: z.array(workspaceMembershipDto),
  currentWorkspaceId: z.number().nullable(),
})
export type MeReply = z.infer<typeof meReply>

/** GET /api/auth/session: the signed-in user's MeReply, or null when nobody is signed in (always 200). */
export const sessionReply = z.object({ session: meReply.nullable() })
export type SessionReply = z.infer<typeof sessionReply>
