/**
 * The model library as the client sees it: the list with its filters (kept while moving between
 * pages), and the model that is open with the caller's working text, autosaved as a draft.
 */
import { defineStore } from 'pinia'
import { computed, reactive, ref, shallowRef } from 'vue'
import type { ListModelsReply, ModelDetailDto, VersionDto } from '@shared/api/models'
import * as models from '@/api/models'

export type SaveState = 'idle' | 'saving' | 'saved' | 'failed'

export const useLibraryStore = defineStore('library', () => {
  // ── the list ──
  const filters = reactive<models.ListFilters & { page: number; pageSize: number }>({ q: '', tag: undefined, owner: undefined, status: undefined, page: 1, pageSize: 20 })
  const list = shallowRef<ListModelsReply | null>(null)
  const listLoading = ref(false)
  let listSeq = 0

  async function fetchList(ws: string): Promise<void> {
    const seq = ++listSeq
    listLoading.value = true
    try {
      const reply = await models.listModels(ws, { ...filters })
      if (seq === listSeq) list.value = reply
    } finally {
      if (seq === listSeq) listLoading.value = false
    }
  }

  function resetList(): void {
    list.value = null
    Object.assign(filters, { q: '', tag: undefined, owner: undefined, status: undefined, page: 1 })
  }

  // ── the open model ──
  const model = shallowRef<ModelDetailDto | null>(null)
  /** the version whose text the editor started from */
  const baseVersion = ref<VersionDto | null>(null)
  const text = ref('')
  const saveState = ref<SaveState>('idle')
  const savedAt = ref<string | null>(null)
  let saveTimer: ReturnType<typeof setTimeout> | null = null
  let workspace = ''

  const dirty = computed(() => baseVersion.value !== null && text.value !== baseVersion.value.text)
  const latest = computed(() => model.value?.latestVersion ?? 0)
  const behind = computed(() => baseVersion.value !== null && baseVersion.value.number < latest.value)

  /** Opens a model: the caller's draft when there is one, else the latest version. */
  async function open(ws: string, id: number): Promise<void> {
    cancelAutosave()
    workspace = ws
    const m = await models.getModel(ws, id)
    const start = m.draft ? m.draft.baseVersion : m.latestVersion
    const v = await models.getVersion(ws, id, start)
    model.value = m
    baseVersion.value = v
    text.value = m.draft?.text ?? v.text
    savedAt.value = m.draft?.updatedAt ?? null
    saveState.value = m.draft ? 'saved' : 'idle'
  }

  async function reload(): Promise<void> {
    if (!model.value) return
    model.value = await models.getModel(workspace, model.value.id)
  }

  function cancelAutosave() {
    if (saveTimer) clearTimeout(saveTimer)
    saveTimer = null
  }

  /** Called on every edit; saves the draft a moment after typing stops (modelers and admins). */
  function edit(next: string, delayMs = 1200): void {
    text.value = next
    if (!model.value?.can.fork) return
    cancelAutosave()
    saveTimer = setTimeout(() => { void saveNow() }, delayMs)
  }

  async function saveNow(): Promise<void> {
    cancelAutosave()
    const m = model.value
    const base = baseVersion.value
    if (!m || !base || !m.can.fork) return
    saveState.value = 'saving'
    try {
      const d = await models.saveDraft(workspace, m.id, text.value, base.number)
      savedAt.value = d.updatedAt
      saveState.value = 'saved'
    } catch {
      saveState.value = 'failed'
    }
  }

  /** Throws the ApiError of a 400 (sheet errors) or 409 (newer version) for the dialog to show. */
  async function publish(note: string, onBase?: number): Promise<VersionDto> {
    const m = model.value!
    cancelAutosave()
    const v = await models.publishVersion(workspace, m.id, { text: text.value, note, baseVersion: onBase ?? baseVersion.value!.number })
    baseVersion.value = v
    text.value = v.text
    saveState.value = 'idle'
    savedAt.value = null
    await reload()
    return v
  }

  /** Leaves the draft and goes back to a version's text. */
  async function discard(toVersion?: number): Promise<void> {
    const m = model.value!
    cancelAutosave()
    await models.discardDraft(workspace, m.id)
    const v = await models.getVersion(workspace, m.id, toVersion ?? m.latestVersion)
    baseVersion.value = v
    text.value = v.text
    saveState.value = 'idle'
    savedAt.value = null
    await reload()
  }

  /** Takes the latest version as the new base, keeping the text being edited. */
  async function rebase(onto: VersionDto): Promise<void> {
    baseVersion.value = onto
    await reload()
    await saveNow()
  }

  function close(): void {
    cancelAutosave()
    model.value = null
    baseVersion.value = null
    text.value = ''
  }

  return {
    filters, list, listLoading, fetchList, resetList,
    model, baseVersion, text, saveState, savedAt, dirty, latest, behind,
    open, reload, edit, saveNow, publish, discard, rebase, close, cancelAutosave,
  }
})
