/**
 * Multiple shooting with its segments spread over a helper thread (shared memory): the same result as
 * in one thread, and the helper did take segments. Seeded synthetic data (fixtures/shooting.ts).
 */
import { afterAll, describe, expect, it } from 'vitest'
import { compileModel } from '../../shared/sheet'
import { runFit } from '../../shared/engine/fit'
import { SegmentThreads } from '../../server/jobs/segment-threads'
import { LV_SHEET, lotkaVolterraSpec } from './fixtures/shooting'

const threads = new SegmentThreads(1)
afterAll(async () => { await threads.close() })

describe('multiple shooting over threads', () => {
  it('gives the same fit as one thread, with segments evaluated by the helper', async () => {
    const model = compileModel(LV_SHEET)
    const spec = lotkaVolterraSpec()
    const alone = await runFit(model, spec, { segments: { segments: 12 } })
    await threads.warmUp()
    const shared = await runFit(model, spec, { segments: { segments: 12, share: threads.share({ sheet: LV_SHEET, spec, options: {}, segments: { segments: 12 } }) } })
    expect(shared.sse).toBe(alone.sse)
    expect(shared.parameters.map((p) => p.value)).toEqual(alone.parameters.map((p) => p.value))
    expect(shared.multipleShooting!.simulations).toBe(alone.multipleShooting!.simulations)
    await threads.idle()
    expect(threads.served).toBeGreaterThan(0)
  }, 400_000)
})
