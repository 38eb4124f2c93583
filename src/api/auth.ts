/** Calls of the /api/auth routes; shapes come from shared/api/auth.ts. */
import { meReply, sessionReply, type MeReply, type SigninBody, type SignupBody } from '@shared/api/auth'
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

export async function signUp(body: SignupBody): Promise<MeReply | null> {
  return meAfter(await api.post('/api/auth/signup', body, { silent: [400, 409] }))
}

export async function signOut(): Promise<void> {
  await api.post('/api/auth/signout', undefined, { silent: [401] })
}

export async function switchWorkspace(workspaceId: number): Promise<MeReply | null> {
  return meAfter(await api.post('/api/auth/workspace', { workspaceId }))
}
