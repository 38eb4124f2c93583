/** `pewter fit` command-line contract: JSON shape, table, exit codes and messages. */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { execFile } from 'node:child_process'
import { mkdtemp, rm, writeFile } from 'node:fs/promises'
import { readFileSync } from 'node:fs'
import { bufferVesselCsv } from '../../server/services/demo-project'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { fitResult } from '../../shared/api/fit'
import { MISRA1A, BOXBOD, nistCsv, nistSheet, sameDigits } from '../../fixtures/fit/nist'
import { run } from '../../server/cli/fit'
import { LV_SHEET, lotkaVolterraSpec } from '../../fixtures/fit/shooting'

let dir = ''
// the command line as users run it: the ahead-of-time bundle (rebuilt first when a source is newer)
const cli = join(process.cwd(), 'scripts/pewter.mjs')

function pewter(args: string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  return new Promise((resolve) => {
    execFile(process.execPath, [cli, 'fit', ...args], { cwd: dir, timeout: 120_000 }, (err, stdout, stderr) => {
      const code = err ? (typeof (err as { code?: unknown }).code === 'number' ? (err as { code: number }).code : -1) : 0
      resolve({ code, stdout, stderr })
    })
  })
}

/** The same command in this process (process start-up is slow on a shared machine): exit code and output. */
async function pewterHere(args: string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  let stdout = ''
  let stderr = ''
  const out = process.stdout.write.bind(process.stdout)
  const err = process.stderr.write.bind(process.stderr)
  const cwd = process.cwd()
  process.chdir(dir)
  process.stdout.write = ((c: string) => { stdout += c; return true }) as typeof process.stdout.write
  process.stderr.write = ((c: string) => { stderr += c; return true }) as typeof process.stderr.write
  try {
    const code = await run(args)
    return { code, stdout, stderr }
  } finally {
    process.stdout.write = out
    process.stderr.write = err
    process.chdir(cwd)
  }
}

beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'pewter-fit-cli-'))
  await writeFile(join(dir, 'misra.sheet'), nistSheet(MISRA1A, MISRA1A.starts[0]))
  await writeFile(join(dir, 'misra.csv'), nistCsv(MISRA1A))
  // the same data with the time in minutes
  await writeFile(join(dir, 'misra-min.csv'), ['t [min],yobs', ...MISRA1A.x.map((x, i) => `${x / 60},${MISRA1A.y[i]}`)].join('\n'))
  await writeFile(join(dir, 'boxbod.sheet'), nistSheet(BOXBOD, BOXBOD.starts[1]))
  await writeFile(join(dir, 'boxbod.csv'), nistCsv(BOXBOD))
  await writeFile(join(dir, 'text.csv'), 't,yobs\n1,109\n2,lots\n3,149\n')
  await writeFile(join(dir, 'notime.csv'), 'label,yobs\nfirst,109\nsecond,149\n')
  await writeFile(join(dir, 'drain.sheet'), 'model "drain"\ntime [s]\nparam k = 1 [1/s] in [0.5, 5]\nstate h = 1 [1]\nh\' = -k * sqrt(h)\noutput level = h [1]\n')
  await writeFile(join(dir, 'drain.csv'), ['t,level', ...Array.from({ length: 30 }, (_, i) => `${i * 0.2},0.5`)].join('\n'))
  // predator–prey record (seeded synthetic data, fixtures/fit/shooting.ts)
  const lv = lotkaVolterraSpec().experiments[0]
  await writeFile(join(dir, 'lv.sheet'), LV_SHEET)
  await writeFile(join(dir, 'lv.csv'), ['t [s],prey,predator', ...Array.from(lv.time, (t, i) => `${t},${lv.outputs.prey[i]},${lv.outputs.predator[i]}`)].join('\n'))
  await writeFile(join(dir, 'fixed.sheet'), 'model "fixed"\ntime [s]\nparam b1 = 200 in [1, 1e4]\nparam b2 = 0.5 fixed\nstate y = 0\ny\' = b2 * (b1 - y)\noutput yobs = y\n')
})
afterAll(async () => {
  if (dir) await rm(dir, { recursive: true, force: true })
})

describe('pewter fit', () => {
  it('--json prints one object with the contract fields; the time unit in the header is converted', async () => {
    const r = await pewter(['misra.sheet', 'misra-min.csv', '--rtol', '1e-11', '--atol', '1e-11', '--json'])
    expect(r.stderr).toBe('')
    expect(r.code).toBe(0)
    const res = fitResult.parse(JSON.parse(r.stdout))
    for (const k of ['status', 'reason', 'sse', 'iterations', 'simulations', 'elapsedMs', 'parameters', 'initialStates', 'outputs', 'correlation', 'warnings']) {
      expect(res).toHaveProperty(k)
    }
    expect(Object.keys(res.parameters[0])).toEqual(expect.arrayContaining(['name', 'value', 'stdError', 'ci95', 'lower', 'upper', 'atBound']))
    expect(Object.keys(res.outputs[0])).toEqual(expect.arrayContaining(['name', 'experiment', 'nrmse', 'rmse', 'r2', 'validation']))
    expect(sameDigits(res.parameters[0].value, MISRA1A.certified.b[0], 6)).toBe(true)
    expect(sameDigits(res.sse!, MISRA1A.certified.rss, 6)).toBe(true)
    expect(res.elapsedMs).toBeGreaterThan(0)
  })

  it('two records, a per-record parameter, a validation file and the readable table', async () => {
    const r = await pewterHere(['boxbod.sheet', 'boxbod.csv', 'boxbod.csv', '--per-record', 'b2', '--validate', 'boxbod.csv', '--rtol', '1e-10'])
    expect(r.code).toBe(0)
    expect(r.stdout).toMatch(/^fit converged/)
    expect(r.stdout).toMatch(/b2 \(per-record, record 1\)/)
    expect(r.stdout).toMatch(/b2 \(per-record, record 2\)/)
    // the verdict table of the residual checks
    expect(r.stdout).toMatch(/residual checks \(5 % level\)/)
    expect(r.stdout).toMatch(/(pass|FAIL)\s+Normality: Jarque–Bera\s+p /)
    // the older option name still works
    const old = await pewterHere(['boxbod.sheet', 'boxbod.csv', 'boxbod.csv', '--local', 'b2', '--rtol', '1e-10', '--json'])
    expect(old.code).toBe(0)
    expect(fitResult.parse(JSON.parse(old.stdout)).parameters.filter((p) => p.name === 'b2')).toHaveLength(2)
    expect(r.stdout).toMatch(/validation/)
    expect(r.stdout).toMatch(/note: .*control or for any safety-related decision/)
  })

  it('--starts N counts the starts in all, the sheet\'s values among them, as the run form does; 0 is refused', async () => {
    const r = await pewterHere(['misra.sheet', 'misra-min.csv', '--starts', '3', '--json'])
    expect(r.code).toBe(0)
    const res = fitResult.parse(JSON.parse(r.stdout))
    expect(res.starts).toHaveLength(3)
    expect(res.starts[0].start).toEqual(fitResult.parse(JSON.parse((await pewterHere(['misra.sheet', 'misra-min.csv', '--json'])).stdout)).starts[0].start)
    const zero = await pewterHere(['misra.sheet', 'misra-min.csv', '--starts', '0'])
    expect(zero.code).toBe(2)
    expect(zero.stderr).toMatch(/--starts: a whole number from 1/)
  })

  it('--segments fits by multiple shooting and adds its section to the JSON; the table says how it went', async () => {
    const r = await pewterHere(['lv.sheet', 'lv.csv', '--segments', '10', '--json'])
    expect(r.code).toBe(0)
    const res = fitResult.parse(JSON.parse(r.stdout))
    expect(res.multipleShooting?.segments).toBe(10)
    expect(res.multipleShooting?.continuous).toBe(true)
    expect(res.status).toBe('converged')
    const single = fitResult.parse(JSON.parse((await pewterHere(['lv.sheet', 'lv.csv', '--json'])).stdout))
    expect(single.multipleShooting).toBeUndefined()
    expect(single.sse!).toBeGreaterThan(100 * res.sse!)
    const t = await pewterHere(['lv.sheet', 'lv.csv', '--segment-length', '1.5'])
    expect(t.stdout).toMatch(/multiple shooting: 10 segments, continuous/)
  }, 60_000)

  it('--threads spreads the segments over helper threads (the bundle starts itself as the helper): the same fit as one thread', async () => {
    const one = await pewter(['lv.sheet', 'lv.csv', '--segments', '10', '--threads', '1', '--json'])
    const two = await pewter(['lv.sheet', 'lv.csv', '--segments', '10', '--threads', '2', '--json'])
    expect(one.code, one.stderr).toBe(0)
    expect(two.code, two.stderr).toBe(0)
    const a = fitResult.parse(JSON.parse(one.stdout))
    const b = fitResult.parse(JSON.parse(two.stdout))
    expect(b.sse).toBe(a.sse)
    expect(b.parameters.map((p) => p.value)).toEqual(a.parameters.map((p) => p.value))
    expect(b.multipleShooting?.defect).toBe(a.multipleShooting?.defect)
  }, 240_000)

  it('bad arguments exit 2 with a one-line reason', async () => {
    const cases: [string[], RegExp][] = [
      [['misra.sheet', 'misra.csv', '--frobnicate'], /unknown option --frobnicate/],
      [['misra.sheet', 'misra.csv', '--bounds', 'b1=5:1'], /--bounds b1: the lower bound \(5\) must be below the upper bound \(1\)/],
      [['misra.sheet', 'misra.csv', '--set', 'bl=3'], /--set bl: the sheet has no parameter or state named 'bl' \(did you mean 'b1'/],
      [['misra.sheet', 'misra.csv', '--set', 'b1=1e5'], /parameter 'b1': the start value 100000 lies outside its bounds \[1, 10000\]/],
      [['fixed.sheet', 'misra.csv', '--free', 'b2'], /--free b2: 'b2' has no bounds/],
      [['misra.sheet', 'missing.csv'], /cannot read missing.csv: ENOENT/],
      [['misra.sheet'], /give a sheet file and at least one data file/],
      [['lv.sheet', 'lv.csv', '--segments', '2', '--segment-length', '1'], /give --segments or --segment-length, not both/],
      [['lv.sheet', 'lv.csv', '--segments', '0'], /--segments: a whole number from 1 to 10000/],
      [['lv.sheet', 'lv.csv', '--segments', '40'], /lv.csv: 60 samples allow at most 30 segments/],
      [['lv.sheet', 'lv.csv', '--segments', '4', '--threads', '0'], /--threads: a whole number from 1 to 64 \(got '0'\)/],
    ]
    const viaProcess = await pewter(cases[1][0])
    expect(viaProcess.code).toBe(2)
    expect(viaProcess.stderr).toMatch(cases[1][1])
    for (const [args, re] of cases) {
      const r = await pewterHere(args)
      expect(r.code, args.join(' ')).toBe(2)
      expect(r.stderr).toMatch(re)
    }
  })

  it('the outcome words in the table and on stderr; a failed fit keeps the engine message', async () => {
    const cut = await pewterHere(['misra.sheet', 'misra.csv', '--max-iterations', '2'])
    expect(cut.code).toBe(0)
    expect(cut.stdout).toMatch(/^fit stopped at the iteration limit: iteration limit \(2\)/)
    expect(cut.stderr).toMatch(/^pewter fit: stopped at the iteration limit: /)
    const ok = await pewterHere(['misra.sheet', 'misra.csv'])
    expect(ok.stdout).toMatch(/^fit converged \((gradient|step-size|cost-change) test\)/)
    expect(ok.stderr).toBe('')
    const failed = await pewterHere(['drain.sheet', 'drain.csv'])
    expect(failed.code).toBe(1)
    expect(failed.stderr).toMatch(/^pewter fit: failed \(start 1\): the model cannot be evaluated at the starting point: .* at t = /)
  })

  it('bad data exits 1 naming file, row and column', async () => {
    const a = await pewterHere(['misra.sheet', 'text.csv'])
    expect(a.code).toBe(1)
    expect(a.stderr).toMatch(/text.csv, row 3, column 'yobs': 'lots' is not a number/)
    const b = await pewterHere(['misra.sheet', 'notime.csv'])
    expect(b.code).toBe(1)
    expect(b.stderr).toMatch(/notime.csv, row 2, column 'label': no time column/)
  })

  it('reads a trace file as an upload does: leading # notes skipped, % columns converted, rows counted in the file', async () => {
    // the demo generator's file (invented, seeded synthetic data): two comment lines, units in the header, opening in %
    const sheet = readFileSync(join(process.cwd(), 'models/heated-buffer-vessel.sheet'), 'utf8')
    const csv = bufferVesselCsv(sheet, { seed: 3, samples: 61, label: 'cli' })
    expect(csv.startsWith('# ')).toBe(true)
    expect(csv).toMatch(/opening \[%\]/)
    await writeFile(join(dir, 'b2.sheet'), sheet)
    await writeFile(join(dir, 'b2.csv'), csv)
    const ok = await pewterHere(['b2.sheet', 'b2.csv', '--max-iterations', '3'])
    expect(ok.stderr).not.toMatch(/row|cannot convert/)
    expect(ok.stdout).toMatch(/^fit (converged|stopped at the iteration limit)/)
    // a bad value is reported at its row in the file, comment lines counted
    const lines = csv.split('\n')
    const header = lines.findIndex((l) => l.startsWith('time'))
    lines[header + 3] = lines[header + 3].replace(/^[^,]+,[^,]+/, (m) => m.replace(/,.*/, ',lots'))
    await writeFile(join(dir, 'b2-bad.csv'), lines.join('\n'))
    const bad = await pewterHere(['b2.sheet', 'b2-bad.csv'])
    expect(bad.code).toBe(1)
    expect(bad.stderr).toMatch(new RegExp(`b2-bad.csv, row ${header + 4}, column 'q_in': 'lots' is not a number`))
  })
})
