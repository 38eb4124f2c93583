/**
 * Field messages for a form, filled from a zod check on the client or a 400 reply from the server,
 * ready for `<el-form-item :error="errors.email">` (Element Plus highlights the field). Messages the form
 * has no field for land in `general`, their place said in words ("free parameters, row 2 (Cv), lower
 * bound"), never as a path like `body.free.1.lower`. A form's request asks the API client to keep its
 * 400 quiet, so each problem is shown once, beside its field.
 *
 * `zodRule` turns a field of a shared/api schema into an Element Plus form rule, so the client checks
 * a field with the very rule the server applies.
 */
import { reactive, ref } from 'vue'
import type { ZodError, ZodType } from 'zod'
import { ApiError, type FieldIssue } from '../api/client'

/** Words for the segments of an issue path: field names, and per list the name of each row. */
export interface FieldWords {
  labels?: Record<string, string>
  /** names of rows of a list field (e.g. `free` → parameter names), so "row 2" reads "row 2 (Cv)" */
  rows?: Record<string, readonly string[]>
}

/** `free.1.lower` → "free parameters, row 2 (Cv), lower bound" with the labels given; unknown names as written. */
export function describeIssuePath(path: string, words: FieldWords = {}): string {
  const segments = path.split('.').filter((s) => s !== '')
  const out: string[] = []
  let list: string | null = null
  for (const seg of segments) {
    if (/^\d+$/.test(seg)) {
      const i = Number(seg)
      const row = list ? words.rows?.[list]?.[i] : undefined
      out.push(row ? `row ${i + 1} (${row})` : `row ${i + 1}`)
      continue
    }
    out.push(words.labels?.[seg] ?? seg)
    list = seg
  }
  return out.join(', ')
}

export function useFieldErrors<F extends string>(fields: readonly F[], words: FieldWords = {}) {
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
      if (field && !errors[field]) {
        // a message for a part of the field (a row of a list) says which part
        const rest = issue.path.slice(field.length + 1)
        errors[field] = rest ? `${describeIssuePath(issue.path, words)}: ${issue.message}` : issue.message
      } else if (!field) {
        unplaced.push(issue.path ? `${describeIssuePath(issue.path, words)}: ${issue.message}` : issue.message)
      }
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

/** An Element Plus form rule checking a value with a zod schema (the first issue's message is shown). */
export interface SchemaRule {
  trigger: 'blur' | 'change'
  validator: (rule: unknown, value: unknown, callback: (error?: Error) => void) => void
}

export function zodRule(schema: ZodType, trigger: 'blur' | 'change' = 'blur'): SchemaRule {
  return {
    trigger,
    validator: (_rule, value, callback) => {
      const r = schema.safeParse(value)
      if (r.success) callback()
      else callback(new Error(r.error.issues[0]?.message ?? 'not valid'))
    },
  }
}
