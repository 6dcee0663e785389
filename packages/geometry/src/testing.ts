/**
 * Test helpers shared by the geometry tests: a closeness matcher with a named quantity and a seeded PRNG so that
 * "1,000 random cases" are the same cases on every run. Not exported from the package index: tests reach it as
 * `@plumbline/geometry/testing`.
 */

/** Throws when |actual − expected| > tol for a scalar or any element of two equal-length arrays. */
export function expectClose(
  actual: number | ArrayLike<number>,
  expected: number | ArrayLike<number>,
  tol: number,
  what = 'value',
): void {
  if (typeof actual === 'number' || typeof expected === 'number') {
    if (typeof actual !== 'number' || typeof expected !== 'number') {
      throw new Error(`${what}: cannot compare a scalar with an array`);
    }
    const err = Math.abs(actual - expected);
    if (!(err <= tol)) throw new Error(`${what}: got ${actual}, expected ${expected} (|err| ${err} > tol ${tol})`);
    return;
  }
  if (actual.length !== expected.length) {
    throw new Error(`${what}: length ${actual.length}, expected ${expected.length}`);
  }
  for (let i = 0; i < actual.length; i++) {
    const a = actual[i]!;
    const e = expected[i]!;
    const err = Math.abs(a - e);
    if (!(err <= tol)) {
      throw new Error(
        `${what}[${i}]: got ${a}, expected ${e} (|err| ${err} > tol ${tol}); ` +
          `actual [${Array.from(actual).join(', ')}], expected [${Array.from(expected).join(', ')}]`,
      );
    }
  }
}

/** Deterministic PRNG (mulberry32) returning uniform numbers in [0, 1). */
export function createRng(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (s + 0x6d2b79f5) >>> 0;
    let t = s;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Standard normal draw via Box–Muller from a uniform source. */
export function gaussian(rng: () => number): number {
  const u = 1 - rng();
  const v = rng();
  return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * v);
}

/** Uniformly distributed unit quaternion [w, x, y, z] (Shoemake's subgroup method). */
export function randomUnitQuat(rng: () => number): Float64Array {
  const u1 = rng(), u2 = rng() * 2 * Math.PI, u3 = rng() * 2 * Math.PI;
  const a = Math.sqrt(1 - u1), b = Math.sqrt(u1);
  return Float64Array.of(b * Math.cos(u3), a * Math.sin(u2), a * Math.cos(u2), b * Math.sin(u3));
}

/** Vector with components uniform in [−scale, scale). */
export function randomVec3(rng: () => number, scale = 1): Float64Array {
  return Float64Array.of((2 * rng() - 1) * scale, (2 * rng() - 1) * scale, (2 * rng() - 1) * scale);
}
