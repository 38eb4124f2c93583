/** Calls of the /api/auth routes; shapes come from shared/api/auth.ts. */
import { meReply, type MeReply, type SigninBody, type SignupBody } from '@shared/api/auth'
import { api, ApiError } from './client'

/** The signed-in user, or null when the server answers 401 (no session). */
export async function fetchMe(): Promise<MeReply | null> {
  try {
    return await api.get('/api/auth/me', { schema: meReply, silent: [401] })
  } catch (e) {
    if (e instanceof ApiError && e.status === 401) return null
    throw e
  }
}

/**
 * The sign-in, sign-up and switch routes may answer with the new MeReply or with a bare
 * acknowledgement; either way the caller gets the session as /api/auth/me reports it.
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
