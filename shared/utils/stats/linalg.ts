/**
 * Small dense k×k algebra on row-major Float64Arrays (k ≈ 10–50).
 *
 * Own code rather than a general matrix library: the matrices are tiny, the calls are
 * few, and staying on Float64Array avoids converting to and from library objects.
 */

/**
 * In-place Cholesky factorisation A = L L' of a symmetric positive definite k×k matrix.
 * On success the lower triangle of `a` holds L (the upper triangle is zeroed) and true is
 * returned; false means A is not (numerically) positive definite.
 */
export function choleskyInPlace(a: Float64Array, k: number): boolean {
  for (let j = 0; j < k; j++) {
    let d = a[j * k + j]!
    for (let m = 0; m < j; m++) d -= a[j * k + m]! * a[j * k + m]!
    if (!(d > 0) || !Number.isFinite(d)) return false
    const ljj = Math.sqrt(d)
    a[j * k + j] = ljj
    for (let i = j + 1; i < k; i++) {
      let s = a[i * k + j]!
      for (let m = 0; m < j; m++) s -= a[i * k + m]! * a[j * k + m]!
      a[i * k + j] = s / ljj
    }
    for (let i = 0; i < j; i++) a[i * k + j] = 0
  }
  return true
}

/** Solves L L' x = b given the Cholesky factor L (lower triangle of `l`); returns a new array. */
export function choleskySolve(l: Float64Array, k: number, b: ArrayLike<number>): Float64Array {
  const x = new Float64Array(k)
  for (let i = 0; i < k; i++) {
    let s = b[i]!
    for (let m = 0; m < i; m++) s -= l[i * k + m]! * x[m]!
    x[i] = s / l[i * k + i]!
  }
  for (let i = k - 1; i >= 0; i--) {
    let s = x[i]!
    for (let m = i + 1; m < k; m++) s -= l[m * k + i]! * x[m]!
    x[i] = s / l[i * k + i]!
  }
  return x
}

/** Inverse of a symmetric positive definite matrix, or null when it is not positive definite. */
export function invertSpd(a: Float64Array, k: number): Float64Array | null {
  const l = Float64Array.from(a)
  if (!choleskyInPlace(l, k)) return null
  const inv = new Float64Array(k * k)
  const e = new Float64Array(k)
  for (let j = 0; j < k; j++) {
    e.fill(0)
    e[j] = 1
    const col = choleskySolve(l, k, e)
    for (let i = 0; i < k; i++) inv[i * k + j] = col[i]!
  }
  // Symmetrise away rounding asymmetry so that variances and covariances are consistent.
  for (let i = 0; i < k; i++) {
    for (let j = 0; j < i; j++) {
      const v = 0.5 * (inv[i * k + j]! + inv[j * k + i]!)
      inv[i * k + j] = v
      inv[j * k + i] = v
    }
  }
  return inv
}

/** C = A B A for symmetric k×k A and B (the sandwich), row-major. */
export function sandwich(a: Float64Array, b: Float64Array, k: number): Float64Array {
  const t = new Float64Array(k * k)
  for (let i = 0; i < k; i++) {
    for (let j = 0; j < k; j++) {
      let s = 0
      for (let m = 0; m < k; m++) s += a[i * k + m]! * b[m * k + j]!
      t[i * k + j] = s
    }
  }
  const c = new Float64Array(k * k)
  for (let i = 0; i < k; i++) {
    for (let j = 0; j <= i; j++) {
      let s = 0
      for (let m = 0; m < k; m++) s += t[i * k + m]! * a[m * k + j]!
      c[i * k + j] = s
      c[j * k + i] = s
    }
  }
  return c
}

/** Quadratic form g' V g for a row-major k×k V. */
export function quadForm(v: ArrayLike<number>, g: ArrayLike<number>, k: number): number {
  let s = 0
  for (let i = 0; i < k; i++) {
    let r = 0
    for (let j = 0; j < k; j++) r += v[i * k + j]! * g[j]!
    s += g[i]! * r
  }
  return s
}
