/**
 * Field messages for a form, filled from a zod check on the client or a 400 reply from the server,
 * ready for `<el-form-item :error="errors.email">`. Messages the form has no field for land in `general`.
 */
import { reactive, ref } from 'vue'
import type { ZodError } from 'zod'
import { ApiError, type FieldIssue } from '@/api/client'

export function useFieldErrors<F extends string>(fields: readonly F[]) {
  const errors = reactive({}) as Partial<Record<F, string>>
  const general = ref<string | null>(null)

  function clear(): void {
    for (const f of fields) delete errors[f]
    general.value = null
  }

  function setIssues(issues: readonly FieldIssue[], fallback?: string): void {
    clear()
    const unplaced: string[] = []
    for (const issue of issues) {
      const field = (fields as readonly string[]).find((f) => issue.path === f || issue.path.startsWith(`${f}.`)) as F | undefined
      if (field && !errors[field]) errors[field] = issue.message
      else if (!field) unplaced.push(issue.path ? `${issue.path}: ${issue.message}` : issue.message)
    }
    if (unplaced.length > 0) general.value = unplaced.join('; ')
    else if (issues.length === 0 && fallback) general.value = fallback
  }

  function fromZod(error: ZodError): void {
    setIssues(error.issues.map((i) => ({ path: i.path.map(String).join('.'), message: i.message })))
  }

  /** Place a server error: field issues next to their fields, anything else as the general message. */
  function fromApi(error: unknown): void {
    if (error instanceof ApiError) setIssues(error.fieldIssues, error.message)
    else setIssues([], error instanceof Error ? error.message : String(error))
  }

  return { errors, general, clear, setIssues, fromZod, fromApi }
}
