/**
 * Who is signed in, which workspaces they belong to, and what their role lets them do.
 *
 * The server is the authority on every permission; these helpers only decide what the client shows.
 */
import { defineStore } from 'pinia'
import { computed, ref } from 'vue'
import { can, type MeReply, type Role, type SigninBody, type SignupBody, type WorkspaceMembershipDto } from '@shared/api/auth'
// Relative on purpose: tests/client type-check this store under tsconfig.node.json, which has no '@' path.
import * as auth from '../api/auth'

export type Permission = keyof typeof can

export const useSessionStore = defineStore('session', () => {
  const me = ref<MeReply | null>(null)
  /** True once the first /api/auth/session has answered (signed in or not). */
  const loaded = ref(false)
  let loading: Promise<void> | null = null

  const user = computed(() => me.value?.user ?? null)
  const isSignedIn = computed(() => me.value !== null)
  const workspaces = computed<WorkspaceMembershipDto[]>(() => me.value?.workspaces ?? [])
  const currentWorkspaceId = computed(() => me.value?.currentWorkspaceId ?? null)
  const currentWorkspace = computed<WorkspaceMembershipDto | null>(
    () => workspaces.value.find((w) => w.id === currentWorkspaceId.value) ?? null,
  )
  /** The role in the current workspace; null when signed out or without a workspace. */
  const role = computed<Role | null>(() => currentWorkspace.value?.role ?? null)

  /** Whether the current role may do `permission` (read, write, approve, administer). */
  function allows(permission: Permission): boolean {
    return role.value !== null && can[permission](role.value)
  }
  const canWrite = computed(() => allows('write'))
  const canApprove = computed(() => allows('approve'))
  const isAdmin = computed(() => allows('administer'))

  function workspaceBySlug(slug: string): WorkspaceMembershipDto | null {
    return workspaces.value.find((w) => w.slug === slug) ?? null
  }

  /** The workspace to open after sign-in: the current one, else the first. */
  const homeWorkspace = computed<WorkspaceMembershipDto | null>(() => currentWorkspace.value ?? workspaces.value[0] ?? null)

  function setMe(next: MeReply | null): void {
    me.value = next
    loaded.value = true
  }

  /** Ask the server who is signed in (again). A network failure leaves the user signed out. */
  async function refresh(): Promise<void> {
    try {
      setMe(await auth.fetchMe())
    } catch {
      setMe(null)
    }
  }

  /** Load the session once; concurrent callers share the same request. */
  function ensureLoaded(): Promise<void> {
    if (loaded.value) return Promise.resolve()
    loading ??= refresh().finally(() => {
      loading = null
    })
    return loading
  }

  async function signIn(body: SigninBody): Promise<void> {
    setMe(await auth.signIn(body))
  }

  /** Asks for an account; resolves to the server's "check your mail" message (no session yet). */
  async function signUp(body: SignupBody): Promise<string> {
    return auth.signUp(body)
  }

  /** Follows an e-mail verification link; a sign-up link opens the session of the new account. */
  async function confirmEmail(token: string, password?: string): Promise<{ created: boolean }> {
    const r = await auth.confirmEmail(token, password)
    if (r.me) setMe(r.me)
    else await refresh()
    return { created: r.created }
  }

  async function signOut(): Promise<void> {
    try {
      await auth.signOut()
    } finally {
      clear()
    }
  }

  /** Make `workspaceId` the current workspace on the server (no-op when it already is). */
  async function switchWorkspace(workspaceId: number): Promise<void> {
    if (workspaceId === currentWorkspaceId.value) return
    const next = await auth.switchWorkspace(workspaceId)
    if (next) setMe(next)
    else clear()
  }

  /** Forget the session locally (after sign-out or when the server says it has expired). */
  function clear(): void {
    setMe(null)
  }

  return {
    me,
    loaded,
    user,
    isSignedIn,
    workspaces,
    currentWorkspaceId,
    currentWorkspace,
    homeWorkspace,
    role,
    canWrite,
    canApprove,
    isAdmin,
    allows,
    workspaceBySlug,
    ensureLoaded,
    refresh,
    signIn,
    signUp,
    confirmEmail,
    signOut,
    switchWorkspace,
    clear,
  }
})
