/**
 * Deterministic pseudo-random numbers for the simulator. Never Math.random: the same seed must give the same bytes on
 * every machine. xoshiro128** (D. Blackman and S. Vigna, "Scrambled linear pseudorandom number generators",
 * ACM TOMS 47(4), 2021) on 32-bit integer arithmetic, seeded through splitmix32; normal deviates by the Box–Muller
 * transform (G. E. P. Box and M. E. Muller, Ann. Math. Statist. 29(2), 1958).
 */

export interface Rng {
  /** Uniform in [0, 1) with 32 bits of resolution. */
  uniform(): number;
  /** Uniform in [lo, hi). */
  range(lo: number, hi: number): number;
  /** Standard normal deviate N(0, 1). */
  gauss(): number;
  /** Integer in [0, n). */
  int(n: number): number;
}

function splitmix32(state: { s: number }): number {
  state.s = (state.s + 0x9e3779b9) | 0;
  let z = state.s;
  z = Math.imul(z ^ (z >>> 16), 0x85ebca6b);
  z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35);
  return (z ^ (z >>> 16)) >>> 0;
}

/**
 * Creates an independent stream from a seed and a stream label, so each sensor draws from its own stream and the
 * order in which sensors are generated never changes their values.
 */
export function createRng(seed: number, stream = ''): Rng {
  let h = (seed >>> 0) ^ 0x5bd1e995;
  for (let i = 0; i < stream.length; i++) h = Math.imul(h ^ stream.charCodeAt(i), 0x01000193);
  const st = { s: h | 0 };
  let a = splitmix32(st);
  let b = splitmix32(st);
  let c = splitmix32(st);
  let d = splitmix32(st);
  if ((a | b | c | d) === 0) a = 1;
  let spare = 0;
  let hasSpare = false;

  function nextU32(): number {
    const result = Math.imul(rotl(Math.imul(b, 5), 7), 9) >>> 0;
    const t = b << 9;
    c ^= a;
    d ^= b;
    b ^= c;
    a ^= d;
    c ^= t;
    d = rotl(d, 11);
    return result;
  }
  function uniform(): number {
    return nextU32() / 4294967296;
  }
  function gauss(): number {
    if (hasSpare) {
      hasSpare = false;
      return spare;
    }
    // 1 − u keeps the argument of log in (0, 1].
    const u1 = 1 - uniform();
    const u2 = uniform();
    const r = Math.sqrt(-2 * Math.log(u1));
    spare = r * Math.sin(2 * Math.PI * u2);
    hasSpare = true;
    return r * Math.cos(2 * Math.PI * u2);
  }
  return {
    uniform,
    gauss,
    range: (lo, hi) => lo + (hi - lo) * uniform(),
    int: (n) => Math.floor(uniform() * n),
  };
}

function rotl(x: number, k: number): number {
  return (x << k) | (x >>> (32 - k));
}
