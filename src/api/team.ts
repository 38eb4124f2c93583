/** Calls of team administration, invitations, password reset, API tokens and the captured mailbox. */
import { z } from 'zod'
import type { Role } from '@shared/api/auth'
import {
  apiTokenDto, auditEntryDto, createdTokenReply, invitationDto, invitationPreview, mailDto, memberDto, settingsBody, workspaceSettingsDto,
  type CreateTokenBody, type InviteBody, type WorkspaceSettingsDto,
} from '@shared/api/team'
import { meReply } from '@shared/api/auth'
import { api } from './client'

const ws = (slug: string) => `/api/workspaces/${encodeURIComponent(slug)}`

export const listMembers = (slug: string) =>
  api.get(`${ws(slug)}/members`, { schema: z.object({ members: z.array(memberDto) }) }).then((r) => r.members)
export const changeRole = (slug: string, userId: number, role: Role) =>
  api.patch(`${ws(slug)}/members/${userId}`, { role }, { schema: z.object({ members: z.array(memberDto) }), silent: [409] }).then((r) => r.members)
export const removeMember = (slug: string, userId: number) => api.delete(`${ws(slug)}/members/${userId}`, { silent: [409] })

export const listInvitations = (slug: string) =>
  api.get(`${ws(slug)}/invitations`, { schema: z.object({ invitations: z.array(invitationDto) }) }).then((r) => r.invitations)
export const invite = (slug: string, body: InviteBody) =>
  api.post(`${ws(slug)}/invitations`, body, { schema: z.object({ invitation: invitationDto, mailed: z.boolean() }), silent: [400, 409] })
export const revokeInvitation = (slug: string, id: number) => api.delete(`${ws(slug)}/invitations/${id}`)

export const listAudit = (slug: string, q: { limit?: number; before?: number; action?: string } = {}) =>
  api.get(`${ws(slug)}/audit`, { query: q, schema: z.object({ entries: z.array(auditEntryDto), next: z.number().nullable() }) })

export const listTokens = (slug: string) =>
  api.get(`${ws(slug)}/tokens`, { schema: z.object({ tokens: z.array(apiTokenDto) }) }).then((r) => r.tokens)
export const createToken = (slug: string, body: CreateTokenBody) =>
  api.post(`${ws(slug)}/tokens`, body, { schema: createdTokenReply, silent: [400, 403] })
export const revokeToken = (slug: string, id: number) => api.delete(`${ws(slug)}/tokens/${id}`)

/** The signed-in user's own captured local mail. */
export const listMailbox = () =>
  api.get('/api/mailbox', { schema: z.object({ messages: z.array(mailDto), capturing: z.boolean() }) })

export const previewInvitation = (token: string) =>
  api.get(`/api/invitations/${encodeURIComponent(token)}`, { schema: invitationPreview, silent: [404, 410] })
export const acceptInvitation = (token: string, body: { name?: string; password?: string } = {}) =>
  api.post(`/api/invitations/${encodeURIComponent(token)}/accept`, body, {
    schema: z.object({ workspace: z.object({ id: z.number(), slug: z.string(), name: z.string() }), role: z.string(), me: meReply }),
    silent: [400, 401, 403, 410],
  })

export const requestPasswordReset = (email: string) =>
  api.post('/api/auth/password-reset', { email }, { schema: z.object({ message: z.string() }), silent: [400] })
export const resetPassword = (token: string, password: string) =>
  api.post(`/api/auth/password-reset/${encodeURIComponent(token)}`, { password }, { schema: z.object({ message: z.string() }), silent: [400, 404, 410] })

export const getWorkspaceSettings = (slug: string) => api.get(`${ws(slug)}/settings`, { schema: workspaceSettingsDto })
export const saveWorkspaceSettings = (slug: string, body: Partial<WorkspaceSettingsDto>) =>
  api.put(`${ws(slug)}/settings`, body, { schema: workspaceSettingsDto })

export const getSettings = () => api.get('/api/auth/settings', { schema: settingsBody })
export const saveSettings = (notifyOnFit: boolean) => api.put('/api/auth/settings', { notifyOnFit }, { schema: settingsBody })
