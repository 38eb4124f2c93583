/**
 * Eigenvalues of a small real nonsymmetric matrix (row-major n×n), the way the classic codes do it:
 *   1. balancing by powers of two (Parlett & Reinsch, Numer. Math. 13 (1969) 293–304; EISPACK `balanc`),
 *   2. reduction to upper Hessenberg form by stabilised elementary similarity transformations
 *      (Wilkinson & Reinsch, Handbook for Automatic Computation II, Linear Algebra, 1971, contribution
 *      II/13 `elmhes`),
 *   3. the Francis implicit double-shift QR iteration on the Hessenberg matrix with deflation and
 *      Wilkinson's exceptional shifts (Golub & Van Loan, Matrix Computations, 4th ed. 2013, Sec. 7.5,
 *      Algorithms 7.5.1 and 7.5.2; Wilkinson & Reinsch, contribution II/14 `hqr`).
 * Complex eigenvalues come in conjugate pairs, the one with positive imaginary part first.
 */
import { LinearAlgebraError } from './errors'

export interface Eigenvalues {
  re: Float64Array
  im: Float64Array
}

const EPS = 2.220446049250313e-16

/** Balances a in place (similarity by a diagonal of powers of two). */
export function balance(a: Float64Array, n: number): void {
  const RADIX = 2
  const SQRDX = RADIX * RADIX
  let done = false
  let sweeps = 0
  while (!done && sweeps++ < 100) {
    done = true
    for (let i = 0; i < n; i++) {
      let r = 0
      let c = 0
      for (let j = 0; j < n; j++) {
        if (j === i) continue
        c += Math.abs(a[j * n + i])
        r += Math.abs(a[i * n + j])
      }
      if (c === 0 || r === 0) continue
      let g = r / RADIX
      let f = 1
      const s = c + r
      while (c < g) { f *= RADIX; c *= SQRDX }
      g = r * RADIX
      while (c > g) { f /= RADIX; c /= SQRDX }
      if ((c + r) / f < 0.95 * s) {
        done = false
        g = 1 / f
        for (let j = 0; j < n; j++) a[i * n + j] *= g
        for (let j = 0; j < n; j++) a[j * n + i] *= f
      }
    }
  }
}

/** Reduces a in place to upper Hessenberg form (entries below the subdiagonal set to 0). */
export function hessenberg(a: Float64Array, n: number): void {
  for (let m = 1; m < n - 1; m++) {
    let x = 0
    let i = m
    for (let j = m; j < n; j++) {
      if (Math.abs(a[j * n + m - 1]) > Math.abs(x)) { x = a[j * n + m - 1]; i = j }
    }
    if (i !== m) {
      for (let j = m - 1; j < n; j++) { const t = a[i * n + j]; a[i * n + j] = a[m * n + j]; a[m * n + j] = t }
      for (let j = 0; j < n; j++) { const t = a[j * n + i]; a[j * n + i] = a[j * n + m]; a[j * n + m] = t }
    }
    if (x !== 0) {
      for (let r = m + 1; r < n; r++) {
        let y = a[r * n + m - 1]
        if (y === 0) continue
        y /= x
        a[r * n + m - 1] = 0
        for (let j = m; j < n; j++) a[r * n + j] -= y * a[m * n + j]
        for (let j = 0; j < n; j++) a[j * n + m] += y * a[j * n + r]
      }
    }
  }
  for (let i = 2; i < n; i++) for (let j = 0; j < i - 1; j++) a[i * n + j] = 0
}

/** Eigenvalues of the upper Hessenberg matrix h (destroyed). */
export function hessenbergEigenvalues(h: Float64Array, n: number): Eigenvalues {
  const a = (i: number, j: number) => h[i * n + j]
  const set = (i: number, j: number, v: number) => { h[i * n + j] = v }
  const wr = new Float64Array(n)
  const wi = new Float64Array(n)
  let anorm = 0
  for (let i = 0; i < n; i++) for (let j = Math.max(i - 1, 0); j < n; j++) anorm += Math.abs(a(i, j))
  let nn = n - 1
  let t = 0
  let p = 0, q = 0, r = 0
  let s: number, w: number, x: number, y: number, z: number
  while (nn >= 0) {
    let its = 0
    let l: number
    do {
      for (l = nn; l > 0; l--) {
        s = Math.abs(a(l - 1, l - 1)) + Math.abs(a(l, l))
        if (s === 0) s = anorm
        if (Math.abs(a(l, l - 1)) <= EPS * s) { set(l, l - 1, 0); break }
      }
      x = a(nn, nn)
      if (l === nn) {
        wr[nn] = x + t
        wi[nn] = 0
        nn--
      } else {
        y = a(nn - 1, nn - 1)
        w = a(nn, nn - 1) * a(nn - 1, nn)
        if (l === nn - 1) {
          p = 0.5 * (y - x)
          q = p * p + w
          z = Math.sqrt(Math.abs(q))
          x += t
          if (q >= 0) {
            z = p + (p >= 0 ? Math.abs(z) : -Math.abs(z))
            wr[nn - 1] = wr[nn] = x + z
            if (z !== 0) wr[nn] = x - w / z
            wi[nn - 1] = wi[nn] = 0
          } else {
            wr[nn - 1] = wr[nn] = x + p
            wi[nn - 1] = z
            wi[nn] = -z
          }
          nn -= 2
        } else {
          if (its === 60) throw new LinearAlgebraError('the QR iteration for the eigenvalues did not converge in 60 iterations')
          if (its === 10 || its === 20 || its === 40) {
            // exceptional shift
            t += x
            for (let i = 0; i <= nn; i++) set(i, i, a(i, i) - x)
            s = Math.abs(a(nn, nn - 1)) + Math.abs(a(nn - 1, nn - 2))
            y = x = 0.75 * s
            w = -0.4375 * s * s
          }
          ++its
          let m: number
          for (m = nn - 2; m >= l; m--) {
            z = a(m, m)
            r = x - z
            s = y - z
            p = (r * s - w) / a(m + 1, m) + a(m, m + 1)
            q = a(m + 1, m + 1) - z - r - s
            r = a(m + 2, m + 1)
            s = Math.abs(p) + Math.abs(q) + Math.abs(r)
            p /= s
            q /= s
            r /= s
            if (m === l) break
            const u = Math.abs(a(m, m - 1)) * (Math.abs(q) + Math.abs(r))
            const v = Math.abs(p) * (Math.abs(a(m - 1, m - 1)) + Math.abs(z) + Math.abs(a(m + 1, m + 1)))
            if (u <= EPS * v) break
          }
          for (let i = m; i < nn - 1; i++) {
            set(i + 2, i, 0)
            if (i !== m) set(i + 2, i - 1, 0)
          }
          for (let k = m; k < nn; k++) {
            if (k !== m) {
              p = a(k, k - 1)
              q = a(k + 1, k - 1)
              r = 0
              if (k + 1 !== nn) r = a(k + 2, k - 1)
              x = Math.abs(p) + Math.abs(q) + Math.abs(r)
              if (x !== 0) { p /= x; q /= x; r /= x }
            }
            const norm = Math.sqrt(p * p + q * q + r * r)
            s = p >= 0 ? norm : -norm
            if (s !== 0) {
              if (k === m) {
                if (l !== m) set(k, k - 1, -a(k, k - 1))
              } else set(k, k - 1, -s * x)
              p += s
              x = p / s
              y = q / s
              z = r / s
              q /= p
              r /= p
              for (let j = k; j <= nn; j++) {
                p = a(k, j) + q * a(k + 1, j)
                if (k + 1 !== nn) {
                  p += r * a(k + 2, j)
                  set(k + 2, j, a(k + 2, j) - p * z)
                }
                set(k + 1, j, a(k + 1, j) - p * y)
                set(k, j, a(k, j) - p * x)
              }
              const mmin = nn < k + 3 ? nn : k + 3
              for (let i = l; i <= mmin; i++) {
                p = x * a(i, k) + y * a(i, k + 1)
                if (k + 1 !== nn) {
                  p += z * a(i, k + 2)
                  set(i, k + 2, a(i, k + 2) - p * r)
                }
                set(i, k + 1, a(i, k + 1) - p * q)
                set(i, k, a(i, k) - p)
              }
            }
          }
        }
      }
    } while (l < nn - 1)
  }
  return { re: wr, im: wi }
}

/**
 * Eigenvalues of a real n×n matrix (row-major; not modified), sorted by real part descending (slowest
 * first), conjugate pairs adjacent with the positive imaginary part first.
 */
export function eigenvalues(m: Float64Array, n: number): Eigenvalues {
  if (n === 0) return { re: new Float64Array(0), im: new Float64Array(0) }
  for (let i = 0; i < n * n; i++) {
    if (!Number.isFinite(m[i])) throw new LinearAlgebraError(`the matrix has a non-finite entry at row ${Math.floor(i / n) + 1}, column ${(i % n) + 1}`)
  }
  const a = Float64Array.from(m.subarray(0, n * n))
  balance(a, n)
  hessenberg(a, n)
  const ev = hessenbergEigenvalues(a, n)
  const order = Array.from({ length: n }, (_, i) => i).sort((i, j) => ev.re[j] - ev.re[i] || ev.im[j] - ev.im[i])
  return { re: Float64Array.from(order, (i) => ev.re[i]), im: Float64Array.from(order, (i) => ev.im[i]) }
}
