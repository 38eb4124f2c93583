/**
 * The team page's data: members, pending invitations, API tokens, the audit log and the workspace's
 * review rule (admins), and the caller's own mail setting. Every action answers with the server's state.
 */
import { defineStore } from 'pinia'
import { computed, ref, shallowRef } from 'vue'
import type { Role } from '@shared/api/auth'
import type { ApiTokenDto, AuditEntryDto, CreateTokenBody, InvitationDto, InviteBody, MemberDto } from '@shared/api/team'
import * as team from '../api/team'
import { useLoadState } from './loadState'

export const useTeamStore = defineStore('team', () => {
  const members = shallowRef<MemberDto[]>([])
  const invitations = shallowRef<InvitationDto[]>([])
  const tokens = shallowRef<ApiTokenDto[]>([])
  const audit = shallowRef<AuditEntryDto[]>([])
  const auditNext = ref<number | null>(null)
  const auditAction = ref('')
  const fourEyes = ref<boolean | null>(null)
  const notifyOnFit = ref<boolean | null>(null)
  const state = useLoadState()
  let ws = ''
  let admin = false

  const adminCount = computed(() => members.value.filter((m) => m.role === 'admin').length)
  const isLastAdmin = (m: MemberDto) => m.role === 'admin' && adminCount.value <= 1

  /** Loads what the caller may see: everyone the members and tokens, admins also invitations, audit and rules. */
  async function load(slug: string, isAdmin: boolean): Promise<boolean> {
    ws = slug
    admin = isAdmin
    void team.getSettings().then((s) => { notifyOnFit.value = s.notifyOnFit }).catch(() => {})
    return state.track(async () => {
      const [m, t] = await Promise.all([team.listMembers(slug), team.listTokens(slug)])
      const extra = isAdmin
        ? await Promise.all([team.getWorkspaceSettings(slug), team.listInvitations(slug), team.listAudit(slug, { limit: 50, action: auditAction.value || undefined })])
        : null
      return { m, t, extra }
    }, ({ m, t, extra }) => {
      members.value = m
      tokens.value = t
      if (extra) {
        fourEyes.value = extra[0].fourEyes
        invitations.value = extra[1]
        audit.value = extra[2].entries
        auditNext.value = extra[2].next
      }
    })
  }

  async function loadAudit(reset: boolean): Promise<void> {
    if (!admin) return
    const r = await team.listAudit(ws, { limit: 50, before: reset ? undefined : auditNext.value ?? undefined, action: auditAction.value || undefined })
    audit.value = reset ? r.entries : [...audit.value, ...r.entries]
    auditNext.value = r.next
  }

  /** 409 (the last admin) is thrown for the caller to show. */
  async function setRole(m: MemberDto, role: Role): Promise<void> {
    try {
      members.value = await team.changeRole(ws, m.userId, role)
      void loadAudit(true)
    } catch (e) {
      members.value = [...members.value] // the select goes back to the stored role
      throw e
    }
  }

  async function removeMember(m: MemberDto): Promise<void> {
    await team.removeMember(ws, m.userId)
    members.value = members.value.filter((x) => x.userId !== m.userId)
    void loadAudit(true)
  }

  /** Throws the ApiError of a 400/409 for the form to place beside its fields. */
  async function invite(body: InviteBody) {
    const r = await team.invite(ws, body)
    invitations.value = await team.listInvitations(ws)
    void loadAudit(true)
    return r
  }

  async function withdraw(inv: InvitationDto): Promise<void> {
    await team.revokeInvitation(ws, inv.id)
    invitations.value = invitations.value.filter((i) => i.id !== inv.id)
  }

  /** The new token's secret (shown once); throws the ApiError of a refusal for the form. */
  async function createToken(body: CreateTokenBody): Promise<string> {
    const r = await team.createToken(ws, body)
    tokens.value = await team.listTokens(ws)
    return r.token
  }

  async function revokeToken(t: ApiTokenDto): Promise<void> {
    await team.revokeToken(ws, t.id)
    tokens.value = await team.listTokens(ws)
  }

  async function setFourEyes(on: boolean): Promise<boolean> {
    const s = await team.saveWorkspaceSettings(ws, { fourEyes: on })
    fourEyes.value = s.fourEyes
    void loadAudit(true)
    return s.fourEyes
  }

  async function setNotifyOnFit(on: boolean): Promise<void> {
    notifyOnFit.value = (await team.saveSettings(on)).notifyOnFit
  }

  return {
    members, invitations, tokens, audit, auditNext, auditAction, fourEyes, notifyOnFit, state, adminCount, isLastAdmin,
    load, loadAudit, setRole, removeMember, invite, withdraw, createToken, revokeToken, setFourEyes, setNotifyOnFit,
  }
})
