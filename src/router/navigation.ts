/** The sections of a workspace, in the order the navigation shows them. */
import type { Permission } from '@/stores/useSessionStore'

export type SectionIcon = 'library' | 'projects' | 'data' | 'runs' | 'team'

export interface WorkspaceSection {
  /** Route name of the section's page (a child of the workspace layout, path /w/:ws/<name>). */
  name: string
  label: string
  icon: SectionIcon
  /** Shown only to roles with this permission. */
  requires?: Permission
}

export const workspaceSections: readonly WorkspaceSection[] = [
  { name: 'library', label: 'Library', icon: 'library' },
  { name: 'projects', label: 'Projects', icon: 'projects' },
  { name: 'data', label: 'Data', icon: 'data' },
  { name: 'runs', label: 'Runs', icon: 'runs' },
  { name: 'team', label: 'Team', icon: 'team' },
]
