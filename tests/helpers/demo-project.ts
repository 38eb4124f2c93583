/**
 * The demo project of the invented Tinmoor Works plant (server/services/demo-project.ts), seeded into a
 * test database and looked up: its project, its first (seeded) run and its estimation and validation
 * records. The traces are seeded synthetic data.
 */
import { eq } from 'drizzle-orm'
import type { Db } from '../../server/db/client'
import { datasets, projects, runs } from '../../server/db/schema'
import { EXAMPLE_PROJECT_NAME, seedDemoProject } from '../../server/services/demo-project'

export async function seededDemoProject(db: Db) {
  await seedDemoProject(db)
  const [project] = await db.select().from(projects).where(eq(projects.name, EXAMPLE_PROJECT_NAME))
  const [run] = await db.select().from(runs).where(eq(runs.projectId, project.id))
  const sets = await db.select().from(datasets).where(eq(datasets.projectId, project.id)).orderBy(datasets.id)
  const estimation = sets.find((d) => d.purpose === 'estimation')!
  const validation = sets.find((d) => d.purpose === 'validation')!
  return { project, run, datasets: sets, estimation, validation }
}
