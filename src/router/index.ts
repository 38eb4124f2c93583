/**
 * Routes and guards.
 *
 * - /signin, /signup: for signed-out visitors (`meta.guest`); a signed-in visitor goes on to
 *   `?redirect=` or their workspace.
 * - /w/:ws/…: the workspace layout (AppShell); `:ws` is the workspace slug. Entering a workspace the
 *   user belongs to makes it the current one on the server; an unknown slug shows the 404 page.
 * - Everything else needs a session; without one the guard sends the visitor to
 *   /signin?redirect=<where they wanted to go>.
 * - `meta.requires` (a permission from shared/api/auth.ts `can`) hides a page from roles without it.
 */
import { ElMessage } from 'element-plus'
import { createRouter, createWebHistory, type RouteLocationNormalized, type RouteLocationRaw } from 'vue-router'
import { useSessionStore, type Permission } from '@/stores/useSessionStore'
import { safeRedirect } from './redirect'
import { homeLocation } from './home'

declare module 'vue-router' {
  interface RouteMeta {
    /** Page title (document title and, by convention, the page's h1). */
    title?: string
    /** Only for signed-out visitors (sign-in, sign-up). */
    guest?: boolean
    /** Reachable signed in or out (the 404 page). */
    public?: boolean
    /** Permission the current role needs for this page. */
    requires?: Permission
    /** Route name of the workspace section this page belongs to (for the navigation highlight). */
    section?: string
  }
}

export const router = createRouter({
  history: createWebHistory(import.meta.env.BASE_URL),
  routes: [
    {
      path: '/signin',
      name: 'signin',
      component: () => import('@/views/SignInView.vue'),
      meta: { guest: true, title: 'Sign in' },
    },
    {
      path: '/signup',
      name: 'signup',
      component: () => import('@/views/SignUpView.vue'),
      meta: { guest: true, title: 'Create an account' },
    },
    {
      path: '/forgot-password',
      name: 'forgot-password',
      component: () => import('@/views/ForgotPasswordView.vue'),
      meta: { guest: true, title: 'Reset your password' },
    },
    {
      path: '/reset-password/:token',
      name: 'reset-password',
      component: () => import('@/views/ResetPasswordView.vue'),
      meta: { public: true, title: 'Choose a new password' },
    },
    {
      path: '/verify-email/:token',
      name: 'verify-email',
      component: () => import('@/views/VerifyEmailView.vue'),
      meta: { public: true, title: 'Confirm your e-mail address' },
    },
    {
      path: '/invitations/:token',
      name: 'accept-invitation',
      component: () => import('@/views/AcceptInvitationView.vue'),
      meta: { public: true, title: 'Join a workspace' },
    },
    {
      path: '/',
      name: 'home',
      // Resolved by the guard below to the user's workspace.
      component: () => import('@/views/NoWorkspaceView.vue'),
      meta: { title: 'Pewter' },
    },
    {
      path: '/w/:ws',
      component: () => import('@/components/AppShell.vue'),
      children: [
        { path: '', name: 'workspace', redirect: (to) => ({ name: 'library', params: { ws: to.params.ws } }) },
        {
          path: 'library',
          name: 'library',
          component: () => import('@/views/LibraryView.vue'),
          meta: { title: 'Library', section: 'library' },
        },
        {
          path: 'library/:modelId(\\d+)',
          name: 'model',
          component: () => import('@/views/ModelView.vue'),
          meta: { title: 'Model', section: 'library' },
        },
        {
          path: 'reviews',
          name: 'reviews',
          component: () => import('@/views/ReviewsView.vue'),
          meta: { title: 'Awaiting review', section: 'library' },
        },
        {
          path: 'reference',
          name: 'reference',
          component: () => import('@/views/ReferenceView.vue'),
          meta: { title: 'Sheet language reference', section: 'library' },
        },
        {
          path: 'projects',
          name: 'projects',
          component: () => import('@/views/ProjectsView.vue'),
          meta: { title: 'Projects', section: 'projects' },
        },
        {
          path: 'data',
          name: 'data',
          component: () => import('@/views/DataView.vue'),
          meta: { title: 'Data', section: 'data' },
        },
        {
          path: 'runs',
          name: 'runs',
          component: () => import('@/views/RunsView.vue'),
          meta: { title: 'Runs', section: 'runs' },
        },
        {
          path: 'projects/:pid(\\d+)',
          name: 'project',
          component: () => import('@/views/ProjectView.vue'),
          meta: { title: 'Project', section: 'projects' },
        },
        {
          path: 'data/:did(\\d+)',
          name: 'dataset',
          component: () => import('@/views/DatasetView.vue'),
          meta: { title: 'Dataset', section: 'data' },
        },
        {
          path: 'runs/compare',
          name: 'run-compare',
          component: () => import('@/views/RunCompareView.vue'),
          meta: { title: 'Compare runs', section: 'runs' },
        },
        {
          path: 'runs/:rid(\\d+)',
          name: 'run',
          component: () => import('@/views/RunView.vue'),
          meta: { title: 'Fit run', section: 'runs' },
        },
        {
          path: 'runs/:rid(\\d+)/report',
          name: 'run-report',
          component: () => import('@/views/RunReportView.vue'),
          meta: { title: 'Fit report', section: 'runs' },
        },
        {
          path: 'team',
          name: 'team',
          component: () => import('@/views/TeamView.vue'),
          meta: { title: 'Team', section: 'team' },
        },
        {
          path: 'mailbox',
          name: 'mailbox',
          component: () => import('@/views/MailboxView.vue'),
          meta: { title: 'Your captured mail', section: 'team' },
        },
      ],
    },
    {
      path: '/:pathMatch(.*)*',
      name: 'not-found',
      component: () => import('@/views/NotFoundView.vue'),
      meta: { public: true, title: 'Page not found' },
    },
  ],
  scrollBehavior: (_to, _from, saved) => saved ?? { top: 0 },
})

/** Show the 404 page at the address the visitor asked for (the URL stays as typed). */
function notFound(to: RouteLocationNormalized): RouteLocationRaw {
  return {
    name: 'not-found',
    params: { pathMatch: to.path.substring(1).split('/') },
    query: to.query,
    hash: to.hash,
  }
}

router.beforeEach(async (to, from) => {
  const session = useSessionStore()
  await session.ensureLoaded()

  if (to.meta.guest) {
    if (!session.isSignedIn) return true
    return safeRedirect(to.query.redirect) ?? homeLocation()
  }
  if (to.meta.public) return true
  if (!session.isSignedIn) {
    return to.fullPath === '/' ? { name: 'signin' } : { name: 'signin', query: { redirect: to.fullPath } }
  }

  if (to.name === 'home') {
    // With a workspace, go there; without one, the home route shows NoWorkspaceView.
    return session.homeWorkspace ? homeLocation() : true
  }

  const slug = typeof to.params.ws === 'string' ? to.params.ws : null
  if (slug !== null) {
    const ws = session.workspaceBySlug(slug)
    if (!ws) return notFound(to)
    if (ws.id !== session.currentWorkspaceId) {
      try {
        await session.switchWorkspace(ws.id)
      } catch {
        // The api module has shown the error. Stay on the page we came from; on the first
        // navigation, open the workspace the server still has as current.
        if (from.matched.length > 0) return false
        const current = session.currentWorkspace
        return current && current.id !== ws.id ? { name: 'library', params: { ws: current.slug } } : notFound(to)
      }
      if (!session.isSignedIn) return { name: 'signin', query: { redirect: to.fullPath } }
    }
  }

  const needed = to.meta.requires
  if (needed && !session.allows(needed)) {
    ElMessage({ type: 'warning', message: `Your role (${session.role ?? 'none'}) cannot open ${to.meta.title ?? 'this page'}.`, grouping: true })
    return slug ? { name: 'library', params: { ws: slug } } : homeLocation()
  }
  return true
})

router.afterEach((to) => {
  const session = useSessionStore()
  const parts = [to.meta.title, to.params.ws ? session.currentWorkspace?.name : undefined, 'Pewter']
  document.title = [...new Set(parts.filter((p): p is string => !!p))].join(' · ')
})

export default router
