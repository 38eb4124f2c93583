/** Calls of the /api/auth routes; shapes come from shared/api/auth.ts. */
import { z } from 'zod'
import { meReply, sessionReply, signupReply, verificationPreview, type MeReply, type SigninBody, type SignupBody } from '@shared/api/auth'
import { api } from './client'

/** The signed-in user, or null when nobody is signed in (the session route answers 200 either way). */
export async function fetchMe(): Promise<MeReply | null> {
  return (await api.get('/api/auth/session', { schema: sessionReply })).session
}

/**
 * The sign-in, sign-up and switch routes may answer with the new MeReply or with a bare
 * acknowledgement; either way the caller gets the session as /api/auth/session reports it.
 */
async function meAfter(reply: unknown): Promise<MeReply | null> {
  const direct = meReply.safeParse(reply)
  return direct.success ? direct.data : fetchMe()
}

/** Wrong credentials answer 401; the caller shows that next to the form, so it is silent. */
export async function signIn(body: SigninBody): Promise<MeReply | null> {
  return meAfter(await api.post('/api/auth/signin', body, { silent: [401, 400] }))
}

/** Always "check your mail" (the same for a new and a known address): the account is made by the mailed link. */
export async function signUp(body: SignupBody): Promise<string> {
  return (await api.post('/api/auth/signup', body, { schema: signupReply, silent: [400] })).message
}

export const previewVerification = (token: string) =>
  api.get(`/api/auth/verify-email/${encodeURIComponent(token)}`, { schema: verificationPreview, silent: [404, 410] })

/** Follows a verification link; a sign-up link needs the password chosen at sign-up and opens a session. */
export const confirmEmail = (token: string, password?: string) =>
  api.post(`/api/auth/verify-email/${encodeURIComponent(token)}`, password ? { password } : {}, {
    schema: z.object({ created: z.boolean(), me: meReply.nullable() }),
    silent: [400, 401, 404, 409, 410],
  })

/** A signed-in account whose address is not confirmed asks for a new link. */
export const requestVerificationLink = () =>
  api.post('/api/auth/verify-email', undefined, { schema: signupReply, silent: [409] }).then((r) => r.message)

export async function signOut(): Promise<void> {
  await api.post('/api/auth/signout', undefined, { silent: [401] })
}

export async function switchWorkspace(workspaceId: number): Promise<MeReply | null> {
  return meAfter(await api.post('/api/auth/workspace', { workspaceId }))
}
