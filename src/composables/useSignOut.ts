/** Signs out (the session is forgotten locally even when the server cannot be reached) and goes to sign-in. */
import { useRouter } from 'vue-router'
import { useSessionStore } from '@/stores/useSessionStore'

export function useSignOut(): () => Promise<void> {
  const session = useSessionStore()
  const router = useRouter()
  return async () => {
    try {
      await session.signOut()
    } finally {
      await router.replace({ name: 'signin' })
    }
  }
}
