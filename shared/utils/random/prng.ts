// Seeded random numbers for generated data (the demo district, benchmarks, differential tests): the same seed
// gives the same numbers on every machine, so generated data and the figures computed from it are reproducible.

/** mulberry32: a small, fast 32-bit PRNG giving uniforms on [0, 1). */
export function prng(seed: number): () => number {
  let a = seed >>> 0
  return () => {
    a = (a + 0x6D2B79F5) >>> 0
    let t = a
    t = Math.imul(t ^ (t >>> 15), t | 1)
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61)
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296
  }
}

/** A standard normal draw by the Box–Muller transform. */
export function normal(u: () => number): number {
  return Math.sqrt(-2 * Math.log(1 - u())) * Math.cos(2 * Math.PI * u())
}
