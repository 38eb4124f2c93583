/**
 * The residual checks of the results page: cumulative periodogram with its Kolmogorov–Smirnov band,
 * Jarque–Bera normality, independence from an input, and the DFT under them.
 *
 * Reference values: computed once with numpy 2.4.6 / scipy 1.17.1 (a general-purpose reference library)
 * on the same seeded synthetic series — numpy.fft.fft for the periodogram, scipy.stats.kstwobign.sf for
 * the KS p-value, scipy.stats.jarque_bera, scipy.stats.chi2.sf — and pasted here. The series are
 * synthetic: Park–Miller "minimal standard" uniforms (S. K. Park & K. W. Miller, "Random number
 * generators: good ones are hard to find", Comm. ACM 31 (1988) 1192–1201), exact in doubles, so the
 * Python script produced the very same numbers; a sum of 12 uniforms minus 6 stands in for N(0, 1).
 */
import { describe, expect, it } from 'vitest'
import { dftPower, fftRadix2 } from '../../shared/engine/stats/fft'
import { cumulativePeriodogram, kolmogorovSurvival, KS_95 } from '../../shared/engine/stats/whiteness'
import { jarqueBera } from '../../shared/engine/stats/normality'
import { crossCorrelation, independenceTest, maxLagFor, medianStep } from '../../shared/engine/stats/residuals'

function* parkMiller(seed: number): Generator<number> {
  let x = seed
  for (;;) {
    x = (16807 * x) % 2147483647
    yield x / 2147483647
  }
}
function normalish(seed: number, n: number): Float64Array {
  const g = parkMiller(seed)
  const out = new Float64Array(n)
  for (let i = 0; i < n; i++) {
    let s = 0
    for (let k = 0; k < 12; k++) s += g.next().value as number
    out[i] = s - 6
  }
  return out
}
const white200 = normalish(12345, 200)
const ar256 = (() => {
  const w = normalish(777, 256)
  const b = new Float64Array(256)
  for (let t = 0; t < 256; t++) b[t] = (t > 0 ? 0.6 * b[t - 1] : 0) + w[t]
  return b
})()

describe('DFT power', () => {
  it('matches the direct sum for a length that is not a power of two (chirp z) and one that is', () => {
    for (const x of [white200.subarray(0, 37), ar256.subarray(0, 64)]) {
      const n = x.length
      const p = dftPower(x, n - 1)
      for (let k = 0; k < n; k++) {
        let re = 0
        let im = 0
        for (let t = 0; t < n; t++) {
          re += x[t] * Math.cos((2 * Math.PI * k * t) / n)
          im -= x[t] * Math.sin((2 * Math.PI * k * t) / n)
        }
        expect(p[k]).toBeCloseTo(re * re + im * im, 8)
      }
    }
  })
  it('the inverse radix-2 transform returns the series times n', () => {
    const re = Float64Array.from(ar256.subarray(0, 16))
    const im = new Float64Array(16)
    fftRadix2(re, im)
    fftRadix2(re, im, true)
    re.forEach((v, i) => expect(v / 16).toBeCloseTo(ar256[i], 12))
  })
})

describe('Kolmogorov distribution', () => {
  // scipy.stats.kstwobign.sf(λ), scipy 1.17.1
  const table: [number, number][] = [
    [0.5, 0.9639452436648751], [0.9, 0.3927307079406543], [1.0, 0.26999967167735456],
    [1.358, 0.05002679733444698], [1.5, 0.022217962616525127], [2.0, 0.0006709252557796953],
  ]
  it.each(table)('Q_KS(%f) matches scipy', (lambda, q) => {
    expect(kolmogorovSurvival(lambda)).toBeCloseTo(q, 10)
  })
  it('the 5 % constant is 1.36 (Box & Jenkins 1970, Sec. 8.2.4)', () => {
    expect(KS_95).toBe(1.36)
    expect(kolmogorovSurvival(1.36)).toBeCloseTo(0.05, 2)
  })
})

describe('cumulative periodogram', () => {
  it('a white series stays inside the band (numpy reference values)', () => {
    const cp = cumulativePeriodogram(white200)!
    expect(cp.q).toBe(99)
    // numpy.fft.fft of the mean-removed series, I = 2/n |X|², cumulative sum over i = 1..q
    expect(cp.cumulative[0]).toBeCloseTo(0.004854348108241066, 12)
    expect(cp.cumulative[9]).toBeCloseTo(0.0942650710925315, 12)
    expect(cp.cumulative[48]).toBeCloseTo(0.5620523185490062, 12)
    expect(cp.cumulative[98]).toBeCloseTo(1, 14)
    expect(cp.d).toBeCloseTo(0.0671028235995112, 12)
    expect(cp.pValue).toBeCloseTo(0.7641658065120329, 8)
    expect(cp.band).toBeCloseTo(1.36 / Math.sqrt(99), 14)
    expect(cp.d).toBeLessThan(cp.band)
  })
  it('a coloured AR(1) series leaves the band (numpy reference values)', () => {
    const cp = cumulativePeriodogram(ar256)!
    expect(cp.q).toBe(127)
    expect(cp.cumulative[0]).toBeCloseTo(0.028966708380633435, 12)
    expect(cp.cumulative[9]).toBeCloseTo(0.34041972160996825, 12)
    expect(cp.cumulative[62]).toBeCloseTo(0.8713727114696463, 12)
    expect(cp.d).toBeCloseTo(0.471858751214156, 12)
    expect(cp.pValue / 5.498643946604415e-25).toBeCloseTo(1, 6)
    expect(cp.d).toBeGreaterThan(cp.band)
  })
  it('a sinusoid at a Fourier frequency puts all its power in one bin', () => {
    // exact: Σ cos(2πjt/n)·e^{−2πikt/n} vanishes for k ≠ j (orthogonality of the DFT basis)
    const n = 120
    const x = Float64Array.from({ length: n }, (_, t) => Math.cos((2 * Math.PI * 7 * t) / n))
    const cp = cumulativePeriodogram(x)!
    expect(cp.cumulative[5]).toBeCloseTo(0, 12)
    expect(cp.cumulative[6]).toBeCloseTo(1, 12)
    expect(cp.pValue).toBeLessThan(1e-6)
  })
  it('needs at least five samples', () => {
    expect(cumulativePeriodogram([1, 2, 3, 4])).toBeNull()
  })
})

describe('Jarque–Bera normality', () => {
  it('matches scipy.stats.jarque_bera on near-normal series', () => {
    const a = jarqueBera(white200)!
    expect(a.statistic).toBeCloseTo(1.2116716800152856, 10)
    expect(a.pValue).toBeCloseTo(0.5456181864852223, 10)
    const b = jarqueBera(ar256)!
    expect(b.statistic).toBeCloseTo(0.8466760399417101, 10)
    expect(b.pValue).toBeCloseTo(0.6548572408709414, 10)
  })
  it('rejects an exponential series (scipy: JB = 1588.305…)', () => {
    const g = parkMiller(4242)
    const s = Float64Array.from({ length: 300 }, () => -Math.log(g.next().value as number))
    const r = jarqueBera(s)!
    expect(r.statistic / 1588.3050126566638).toBeCloseTo(1, 9)
    expect(r.pValue).toBeLessThan(1e-300)
    // the exponential distribution has skewness 2 and kurtosis 9 (common practice, no source)
    expect(r.skewness).toBeGreaterThan(1.2)
  })
  it('a constant series has no test', () => {
    expect(jarqueBera([2, 2, 2, 2])).toBeNull()
  })
})

describe('independence from an input', () => {
  const g = parkMiller(99)
  const u = Float64Array.from({ length: 200 }, () => g.next().value as number)
  const dependent = Float64Array.from(white200)
  for (let t = 2; t < 200; t++) dependent[t] += 0.8 * (u[t - 2] - 0.5) * 3
  const L = maxLagFor(200)
  it('uses 23 lags for 200 samples', () => expect(L).toBe(23))
  it('matches N Σ r² and scipy.stats.chi2.sf for independent residuals', () => {
    const t = independenceTest(crossCorrelation(u, white200, L), L, 200)
    expect(t.dof).toBe(24)
    expect(t.statistic).toBeCloseTo(22.271975326194678, 9)
    expect(t.pValue).toBeCloseTo(0.5630373390599863, 9)
  })
  it('rejects residuals that carry a delayed input', () => {
    const t = independenceTest(crossCorrelation(u, dependent, L), L, 200)
    expect(t.statistic).toBeCloseTo(92.8751386611487, 9)
    expect(t.pValue / 4.793966213140833e-10).toBeCloseTo(1, 6)
  })
})

describe('sample step', () => {
  it('is the median spacing', () => {
    expect(medianStep([0, 1, 2, 3, 10])).toBe(1)
    expect(medianStep([0, 0.5, 1.5, 2.5])).toBe(1)
    expect(medianStep([4])).toBe(0)
  })
})
