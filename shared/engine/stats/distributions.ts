/**
 * Distribution functions needed for intervals and residual tests, implemented here (no dependency).
 *
 * - ln Γ(x): Lanczos approximation with the coefficients of W. H. Press, S. A. Teukolsky,
 *   W. T. Vetterling & B. P. Flannery, Numerical Recipes, 3rd ed., 2007, Sec. 6.1 (gammln, g = 671/128, 14 terms).
 * - Regularised incomplete gamma P(a,x), Q(a,x): series and Lentz continued fraction,
 *   Numerical Recipes 3rd ed., Sec. 6.2 (eqs. 6.2.5 and 6.2.7).
 * - Regularised incomplete beta I_x(a,b): continued fraction, Numerical Recipes 3rd ed., Sec. 6.4 (eq. 6.4.5).
 * - Student-t distribution: F(t; ν) = 1 − ½ I_{ν/(ν+t²)}(ν/2, ½) (Abramowitz & Stegun, Handbook of
 *   Mathematical Functions, 1964, 26.7.1 with 26.5.27); its quantile by safeguarded Newton iteration on F
 *   started from the Cornish–Fisher expansion of A&S 26.7.5.
 * - Chi-square survival: Q(ν/2, x/2) (A&S 26.4.2).
 */

const LANCZOS = [
  57.1562356658629235, -59.5979603554754912, 14.1360979747417471, -0.491913816097620199,
  0.339946499848118887e-4, 0.465236289270485756e-4, -0.983744753048795646e-4, 0.158088703224912494e-3,
  -0.210264441724104883e-3, 0.217439618115212643e-3, -0.164318106536763890e-3, 0.844182239838527433e-4,
  -0.261908384015814087e-4, 0.368991826595316234e-5,
]

export function lnGamma(xx: number): number {
  if (!(xx > 0)) throw new RangeError('lnGamma: argument must be positive')
  const x = xx
  let y = xx
  let tmp = x + 5.24218750000000000 // 671/128
  tmp = (x + 0.5) * Math.log(tmp) - tmp
  let ser = 0.999999999999997092
  for (let j = 0; j < 14; j++) ser += LANCZOS[j] / ++y
  return tmp + Math.log((2.5066282746310005 * ser) / x)
}

const FPMIN = 1e-300
const EPS = 2.220446049250313e-16

/** Regularised lower incomplete gamma P(a, x). */
export function gammaP(a: number, x: number): number {
  if (x < 0 || a <= 0) throw new RangeError('gammaP: needs x >= 0 and a > 0')
  if (x === 0) return 0
  return x < a + 1 ? gammaSeries(a, x) : 1 - gammaContinuedFraction(a, x)
}

/** Regularised upper incomplete gamma Q(a, x) = 1 − P(a, x). */
export function gammaQ(a: number, x: number): number {
  if (x < 0 || a <= 0) throw new RangeError('gammaQ: needs x >= 0 and a > 0')
  if (x === 0) return 1
  return x < a + 1 ? 1 - gammaSeries(a, x) : gammaContinuedFraction(a, x)
}

function gammaSeries(a: number, x: number): number {
  const gln = lnGamma(a)
  let ap = a
  let sum = 1 / a
  let del = sum
  for (let n = 0; n < 10000; n++) {
    ap += 1
    del *= x / ap
    sum += del
    if (Math.abs(del) < Math.abs(sum) * EPS) break
  }
  return sum * Math.exp(-x + a * Math.log(x) - gln)
}

function gammaContinuedFraction(a: number, x: number): number {
  const gln = lnGamma(a)
  let b = x + 1 - a
  let c = 1 / FPMIN
  let d = 1 / b
  let h = d
  for (let i = 1; i < 10000; i++) {
    const an = -i * (i - a)
    b += 2
    d = an * d + b
    if (Math.abs(d) < FPMIN) d = FPMIN
    c = b + an / c
    if (Math.abs(c) < FPMIN) c = FPMIN
    d = 1 / d
    const del = d * c
    h *= del
    if (Math.abs(del - 1) < EPS) break
  }
  return Math.exp(-x + a * Math.log(x) - gln) * h
}

/** Regularised incomplete beta I_x(a, b). */
export function betaI(a: number, b: number, x: number): number {
  if (a <= 0 || b <= 0) throw new RangeError('betaI: needs a, b > 0')
  if (x <= 0) return 0
  if (x >= 1) return 1
  const bt = Math.exp(lnGamma(a + b) - lnGamma(a) - lnGamma(b) + a * Math.log(x) + b * Math.log(1 - x))
  if (x < (a + 1) / (a + b + 2)) return (bt * betaContinuedFraction(a, b, x)) / a
  return 1 - (bt * betaContinuedFraction(b, a, 1 - x)) / b
}

function betaContinuedFraction(a: number, b: number, x: number): number {
  const qab = a + b
  const qap = a + 1
  const qam = a - 1
  let c = 1
  let d = 1 - (qab * x) / qap
  if (Math.abs(d) < FPMIN) d = FPMIN
  d = 1 / d
  let h = d
  for (let m = 1; m < 10000; m++) {
    const m2 = 2 * m
    let aa = (m * (b - m) * x) / ((qam + m2) * (a + m2))
    d = 1 + aa * d
    if (Math.abs(d) < FPMIN) d = FPMIN
    c = 1 + aa / c
    if (Math.abs(c) < FPMIN) c = FPMIN
    d = 1 / d
    h *= d * c
    aa = (-(a + m) * (qab + m) * x) / ((a + m2) * (qap + m2))
    d = 1 + aa * d
    if (Math.abs(d) < FPMIN) d = FPMIN
    c = 1 + aa / c
    if (Math.abs(c) < FPMIN) c = FPMIN
    d = 1 / d
    const del = d * c
    h *= del
    if (Math.abs(del - 1) < EPS) break
  }
  return h
}

/** Student-t cumulative distribution F(t; ν). */
export function studentTCdf(t: number, nu: number): number {
  if (!(nu > 0)) throw new RangeError('studentTCdf: degrees of freedom must be positive')
  const x = nu / (nu + t * t)
  const tail = 0.5 * betaI(nu / 2, 0.5, x)
  return t >= 0 ? 1 - tail : tail
}

/** Standard normal density. */
function normalPdf(z: number): number {
  return Math.exp(-0.5 * z * z) / 2.5066282746310002
}

/** Standard normal quantile by Newton iteration on Φ(z) = ½ Q(½, z²/2) complement (A&S 26.2.29 relation to erf). */
export function normalQuantile(p: number): number {
  if (!(p > 0 && p < 1)) throw new RangeError('normalQuantile: p must lie in (0, 1)')
  if (p === 0.5) return 0
  // Φ(z) = ½ (1 + sign(z) P(½, z²/2))
  const cdf = (z: number) => 0.5 * (1 + Math.sign(z) * gammaP(0.5, (z * z) / 2))
  // start from a logistic-type approximation, then Newton
  let z = Math.sqrt(-2 * Math.log(Math.min(p, 1 - p)))
  z = z - (2.515517 + 0.802853 * z + 0.010328 * z * z) / (1 + 1.432788 * z + 0.189269 * z * z + 0.001308 * z * z * z)
  if (p < 0.5) z = -z
  for (let i = 0; i < 50; i++) {
    const dz = (cdf(z) - p) / normalPdf(z)
    z -= dz
    if (Math.abs(dz) < 1e-15 * Math.max(1, Math.abs(z))) break
  }
  return z
}

/** Student-t quantile: the t with F(t; ν) = p. */
export function studentTQuantile(p: number, nu: number): number {
  if (!(p > 0 && p < 1)) throw new RangeError('studentTQuantile: p must lie in (0, 1)')
  if (!(nu > 0)) throw new RangeError('studentTQuantile: degrees of freedom must be positive')
  if (p === 0.5) return 0
  if (p < 0.5) return -studentTQuantile(1 - p, nu)
  if (!Number.isFinite(nu) || nu > 1e7) return normalQuantile(p)
  // closed forms for ν = 1 and ν = 2 (A&S 26.7.3)
  if (nu === 1) return Math.tan(Math.PI * (p - 0.5))
  if (nu === 2) return (2 * p - 1) / Math.sqrt(2 * p * (1 - p))
  // Cornish–Fisher start (A&S 26.7.5)
  const z = normalQuantile(p)
  const z3 = z * z * z
  const z5 = z3 * z * z
  let t = z + (z3 + z) / (4 * nu) + (5 * z5 + 16 * z3 + 3 * z) / (96 * nu * nu)
  // density for Newton steps
  const lnc = lnGamma((nu + 1) / 2) - lnGamma(nu / 2) - 0.5 * Math.log(nu * Math.PI)
  let lo = 0
  let hi = Infinity
  for (let i = 0; i < 100; i++) {
    const f = studentTCdf(t, nu) - p
    if (f > 0) hi = Math.min(hi, t)
    else lo = Math.max(lo, t)
    const pdf = Math.exp(lnc - ((nu + 1) / 2) * Math.log(1 + (t * t) / nu))
    let next = t - f / pdf
    if (!(next > lo && next < hi)) next = Number.isFinite(hi) ? 0.5 * (lo + hi) : 2 * t + 1
    if (Math.abs(next - t) <= 1e-14 * Math.abs(t)) {
      t = next
      break
    }
    t = next
  }
  return t
}

/** Upper tail of the chi-square distribution with ν degrees of freedom: P(X > x). */
export function chiSquareSurvival(x: number, nu: number): number {
  if (!(nu > 0)) throw new RangeError('chiSquareSurvival: degrees of freedom must be positive')
  if (x <= 0) return 1
  return gammaQ(nu / 2, x / 2)
}
