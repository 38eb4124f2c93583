/** Request and reply shapes of team administration, invitations, password reset, API tokens and mail. */
import { z } from 'zod'
import { emailSchema, passwordSchema, personName, roleSchema } from './auth'
import { visibleText } from './text'

export const memberDto = z.object({
  userId: z.number(),
  name: z.string(),
  email: z.string(),
  role: roleSchema,
  joinedAt: z.string(),
})
export type MemberDto = z.infer<typeof memberDto>

export const changeRoleBody = z.object({ role: roleSchema })

export const inviteBody = z.object({ email: emailSchema, role: roleSchema })
export type InviteBody = z.infer<typeof inviteBody>

export const invitationDto = z.object({
  id: z.number(),
  email: z.string(),
  role: roleSchema,
  invitedBy: z.string().nullable(),
  expiresAt: z.string(),
  createdAt: z.string(),
})
export type InvitationDto = z.infer<typeof invitationDto>

/** What the accept page shows before accepting (GET /api/invitations/:token). */
export const invitationPreview = z.object({
  workspace: z.object({ slug: z.string(), name: z.string() }),
  email: z.string(),
  role: roleSchema,
  expiresAt: z.string(),
  /** an account with the invited e-mail exists: sign in with it, then accept */
  accountExists: z.boolean(),
})
export type InvitationPreview = z.infer<typeof invitationPreview>

/** Signed in: empty body. Signed out, no account yet: name and password create the account. */
export const acceptInvitationBody = z.object({
  name: personName.optional(),
  password: passwordSchema.optional(),
})

export const passwordResetRequestBody = z.object({ email: emailSchema })
export const passwordResetBody = z.object({ password: passwordSchema })

export const settingsBody = z.object({ notifyOnFit: z.boolean() })

/** A workspace's own rules (GET by any member, PUT by admins). */
export const workspaceSettingsDto = z.object({
  /** four-eyes rule: a model version cannot be approved by its own author */
  fourEyes: z.boolean(),
})
export type WorkspaceSettingsDto = z.infer<typeof workspaceSettingsDto>
export const workspaceSettingsBody = workspaceSettingsDto.partial()
export type SettingsDto = z.infer<typeof settingsBody>

export const auditQuery = z.object({
  limit: z.coerce.number().int().min(1).max(500).default(100),
  before: z.coerce.number().int().positive().optional(),
  action: z.string().max(48).optional(),
})

export const auditEntryDto = z.object({
  id: z.number(),
  action: z.string(),
  actor: z.object({ id: z.number(), name: z.string(), email: z.string() }).nullable(),
  target: z.string().nullable(),
  details: z.unknown(),
  ip: z.string().nullable(),
  createdAt: z.string(),
})
export type AuditEntryDto = z.infer<typeof auditEntryDto>

export const createTokenBody = z.object({
  name: visibleText('the token name', 80, 'a token needs a name'),
  role: roleSchema,
})
export type CreateTokenBody = z.infer<typeof createTokenBody>

export const apiTokenDto = z.object({
  id: z.number(),
  name: z.string(),
  role: roleSchema,
  prefix: z.string(),
  owner: z.object({ id: z.number(), name: z.string() }),
  lastUsedAt: z.string().nullable(),
  revokedAt: z.string().nullable(),
  createdAt: z.string(),
})
export type ApiTokenDto = z.infer<typeof apiTokenDto>

/** The secret appears in this reply only; the server keeps its SHA-256. */
export const createdTokenReply = apiTokenDto.extend({ token: z.string() })
export type CreatedTokenReply = z.infer<typeof createdTokenReply>

export const mailDto = z.object({
  id: z.number(),
  from: z.string(),
  to: z.string(),
  subject: z.string(),
  text: z.string(),
  html: z.string().nullable(),
  receivedAt: z.string(),
})
export type MailDto = z.infer<typeof mailDto>
