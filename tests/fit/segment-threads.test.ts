/**
 * Multiple shooting with its segments spread over helper threads (node:worker_threads, message
 * passing; server/jobs/segment-threads.ts): the same fit, bitwise, as in the fit's thread alone, and
 * the helper did evaluate blocks. Seeded synthetic data (fixtures/fit/shooting.ts).
 */
import { afterAll, describe, expect, it } from 'vitest'
import { compileModel } from '../../shared/sheet'
import { runFit } from '../../shared/engine/fit'
import { SegmentHelpers, defaultSegmentThreads, segmentThreadsOption } from '../../server/jobs/segment-threads'
import { LV_SHEET, lotkaVolterraSpec } from '../../fixtures/fit/shooting'

const helpers = new SegmentHelpers()
afterAll(async () => { await helpers.close() })

describe('multiple shooting over threads', () => {
  it('gives bitwise the same fit with 1 and 2 threads, the helper evaluating blocks of segments', async () => {
    const model = compileModel(LV_SHEET)
    const spec = lotkaVolterraSpec(7, 240, 0.0625)
    const setup = { sheet: LV_SHEET, spec, options: {}, segments: { segments: 12 } }
    await helpers.warmUp(1)
    const alone = await runFit(model, spec, { segments: setup.segments, segmentEvaluator: helpers.factory(setup, 1) })
    expect(helpers.served).toBe(0)
    const spread = await runFit(model, spec, { segments: setup.segments, segmentEvaluator: helpers.factory(setup, 2) })
    expect(helpers.served).toBeGreaterThan(0)
    expect(spread.sse).toBe(alone.sse)
    expect(spread.parameters.map((p) => p.value)).toEqual(alone.parameters.map((p) => p.value))
    expect(spread.parameters.map((p) => p.stdError)).toEqual(alone.parameters.map((p) => p.stdError))
    expect(spread.multipleShooting!.defect).toBe(alone.multipleShooting!.defect)
    expect(spread.multipleShooting!.segmentCost).toBe(alone.multipleShooting!.segmentCost)
    expect(spread.multipleShooting!.simulations).toBe(alone.multipleShooting!.simulations)
    expect(spread.iterations).toBe(alone.iterations)
  }, 300_000)

  it('threads option: default min(segments, cores − 1), at least 1; bad values refused with the option named', () => {
    expect(defaultSegmentThreads(40, 2)).toBe(1)
    expect(defaultSegmentThreads(40, 8)).toBe(7)
    expect(defaultSegmentThreads(3, 8)).toBe(3)
    expect(defaultSegmentThreads(1, 1)).toBe(1)
    expect(segmentThreadsOption(undefined, 'X')).toBeNull()
    expect(segmentThreadsOption('4', 'X')).toBe(4)
    expect(() => segmentThreadsOption('0', 'PEWTER_SEGMENT_THREADS')).toThrow(/PEWTER_SEGMENT_THREADS: a whole number from 1 to 64 \(got '0'\)/)
    expect(() => segmentThreadsOption('two', '--threads')).toThrow(/--threads/)
  })
})
