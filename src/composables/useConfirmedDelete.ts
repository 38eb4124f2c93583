/**
 * Deleting a run, dataset or project: asks first, then calls the API. A refusal (409: something still
 * depends on it, named in the message) is shown by the API client's message and nothing is removed.
 */
import { ElMessageBox } from 'element-plus'
import { ApiError } from '@/api/client'

export function useConfirmedDelete() {
  /** true when the thing was deleted; false when the user said no or the server refused */
  async function confirmAndDelete(what: string, consequence: string, remove: () => Promise<unknown>): Promise<boolean> {
    try {
      await ElMessageBox.confirm(`${consequence} This cannot be undone.`, `Delete ${what}?`, { confirmButtonText: 'Delete', cancelButtonText: 'Keep it', type: 'warning' })
    } catch {
      return false
    }
    try {
      await remove()
      return true
    } catch (e) {
      if (e instanceof ApiError) return false
      throw e
    }
  }
  return { confirmAndDelete }
}
