import { z } from 'zod'
import { visibleText } from './text'


export const createProjectBody = z.object({
  name: visibleText('the project name', 120, 'a project needs a name'),
  description: z.string().max(4000).default(''),
})
export type CreateProjectBody = z.infer<typeof createProjectBody>

export const updateProjectBody = z.object({
  name: visibleText('the project name', 120, 'a project needs a name').optional(),
  description: z.string().max(4000).optional(),
})
export type UpdateProjectBody = z.infer<typeof updateProjectBody>

export const projectDto = z.object({
  id: z.number(),
  name: z.string(),
  description: z.string(),
  createdAt: z.string(),
  createdBy: z.number().nullable(),
})
export type ProjectDto = z.infer<typeof projectDto>

/** GET /api/workspaces/:ws/projects */
export const projectListReply = z.object({ projects: z.array(projectDto) })

/** POST /api/workspaces/:ws/projects/example: the example project made and its first fit queued. */
export const exampleProjectReply = z.object({ projectId: z.number().int(), runId: z.number().int() })
export type ExampleProjectReply = z.infer<typeof exampleProjectReply>
