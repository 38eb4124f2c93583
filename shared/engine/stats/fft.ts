/**
 * Discrete Fourier transform of a real series of any length, for the periodogram.
 *
 * - Radix-2 decimation-in-time FFT, iterative with bit-reversed ordering: J. W. Cooley & J. W. Tukey,
 *   "An algorithm for the machine calculation of complex Fourier series", Mathematics of Computation 19
 *   (1965) 297–301.
 * - Any length n through the chirp z-transform: X_k = w_k Σ_t (x_t w_t) w*_{k−t} with w_t = e^{−iπt²/n},
 *   a circular convolution done with radix-2 FFTs of length ≥ 2n − 1: L. I. Bluestein, "A linear filtering
 *   approach to the computation of discrete Fourier transform", IEEE Trans. Audio and Electroacoustics 18
 *   (1970) 451–455.
 * All buffers are typed arrays allocated once per call.
 */

/** In-place radix-2 FFT of (re, im), length a power of two; `inverse` computes the unscaled inverse. */
export function fftRadix2(re: Float64Array, im: Float64Array, inverse = false): void {
  const n = re.length
  if (n & (n - 1)) throw new RangeError('fftRadix2: length must be a power of two')
  for (let i = 1, j = 0; i < n; i++) {
    let bit = n >> 1
    for (; j & bit; bit >>= 1) j ^= bit
    j ^= bit
    if (i < j) {
      let t = re[i]; re[i] = re[j]; re[j] = t
      t = im[i]; im[i] = im[j]; im[j] = t
    }
  }
  const sign = inverse ? 1 : -1
  for (let len = 2; len <= n; len <<= 1) {
    const ang = (sign * 2 * Math.PI) / len
    const wr = Math.cos(ang)
    const wi = Math.sin(ang)
    const half = len >> 1
    for (let i = 0; i < n; i += len) {
      let cr = 1
      let ci = 0
      for (let k = 0; k < half; k++) {
        const a = i + k
        const b = a + half
        const xr = re[b] * cr - im[b] * ci
        const xi = re[b] * ci + im[b] * cr
        re[b] = re[a] - xr
        im[b] = im[a] - xi
        re[a] += xr
        im[a] += xi
        const nr = cr * wr - ci * wi
        ci = cr * wi + ci * wr
        cr = nr
      }
    }
  }
}

/**
 * |X_k|² for k = 0..kMax of the DFT X_k = Σ_{t=0}^{n−1} x_t e^{−2πikt/n} of a real series x.
 */
export function dftPower(x: ArrayLike<number>, kMax: number): Float64Array {
  const n = x.length
  const out = new Float64Array(kMax + 1)
  if (n === 0) return out
  if ((n & (n - 1)) === 0) {
    const re = Float64Array.from(x)
    const im = new Float64Array(n)
    fftRadix2(re, im)
    for (let k = 0; k <= kMax; k++) out[k] = re[k] * re[k] + im[k] * im[k]
    return out
  }
  let m = 1
  while (m < 2 * n - 1) m <<= 1
  // chirp w_t = exp(−iπ t²/n); t² taken mod 2n keeps the angle exact for long series
  const cr = new Float64Array(n)
  const ci = new Float64Array(n)
  for (let t = 0; t < n; t++) {
    const ang = (Math.PI * ((t * t) % (2 * n))) / n
    cr[t] = Math.cos(ang)
    ci[t] = -Math.sin(ang)
  }
  const ar = new Float64Array(m)
  const ai = new Float64Array(m)
  for (let t = 0; t < n; t++) {
    ar[t] = x[t] * cr[t]
    ai[t] = x[t] * ci[t]
  }
  const br = new Float64Array(m)
  const bi = new Float64Array(m)
  br[0] = cr[0]
  bi[0] = -ci[0]
  for (let t = 1; t < n; t++) {
    br[t] = br[m - t] = cr[t]
    bi[t] = bi[m - t] = -ci[t]
  }
  fftRadix2(ar, ai)
  fftRadix2(br, bi)
  for (let k = 0; k < m; k++) {
    const r = ar[k] * br[k] - ai[k] * bi[k]
    ai[k] = ar[k] * bi[k] + ai[k] * br[k]
    ar[k] = r
  }
  fftRadix2(ar, ai, true)
  for (let k = 0; k <= kMax; k++) {
    const yr = ar[k] / m
    const yi = ai[k] / m
    const xr = yr * cr[k] - yi * ci[k]
    const xi = yr * ci[k] + yi * cr[k]
    out[k] = xr * xr + xi * xi
  }
  return out
}
