/** Basic dense products on row-major Float64Array with explicit dimensions (a[i*cols + j]). */

function checkLength(name: string, a: ArrayLike<number>, len: number): void {
  if (a.length < len) throw new RangeError(`${name} has ${a.length} elements, needs ${len}`);
}

/** out(n×n) = I. */
export function identity(out: Float64Array, n: number): Float64Array {
  checkLength('out', out, n * n);
  out.fill(0, 0, n * n);
  for (let i = 0; i < n; i++) out[i * n + i] = 1;
  return out;
}

/** out(n×m) = aᵀ for a(m×n); out must not alias a. */
export function transpose(out: Float64Array, a: Float64Array, m: number, n: number): Float64Array {
  checkLength('a', a, m * n);
  checkLength('out', out, m * n);
  for (let i = 0; i < m; i++) for (let j = 0; j < n; j++) out[j * m + i] = a[i * n + j]!;
  return out;
}

/** out(m×n) = a(m×k)·b(k×n); out must not alias a or b. i-k-j loop order for row-major locality. */
export function multiply(out: Float64Array, a: Float64Array, b: Float64Array, m: number, k: number, n: number): Float64Array {
  checkLength('a', a, m * k);
  checkLength('b', b, k * n);
  checkLength('out', out, m * n);
  out.fill(0, 0, m * n);
  for (let i = 0; i < m; i++) {
    const oi = i * n;
    for (let p = 0; p < k; p++) {
      const aip = a[i * k + p]!;
      if (aip === 0) continue;
      const bp = p * n;
      for (let j = 0; j < n; j++) out[oi + j]! += aip * b[bp + j]!;
    }
  }
  return out;
}

/** out(n×n) = aᵀa for a(m×n) (normal-equation matrix); symmetric, both triangles written. */
export function gram(out: Float64Array, a: Float64Array, m: number, n: number): Float64Array {
  checkLength('a', a, m * n);
  checkLength('out', out, n * n);
  out.fill(0, 0, n * n);
  for (let r = 0; r < m; r++) {
    const ar = r * n;
    for (let i = 0; i < n; i++) {
      const ai = a[ar + i]!;
      if (ai === 0) continue;
      for (let j = i; j < n; j++) out[i * n + j]! += ai * a[ar + j]!;
    }
  }
  for (let i = 0; i < n; i++) for (let j = 0; j < i; j++) out[i * n + j] = out[j * n + i]!;
  return out;
}

/** out(m) = a(m×n)·x(n); out must not alias x. */
export function mulVec(out: Float64Array, a: Float64Array, x: Float64Array, m: number, n: number): Float64Array {
  checkLength('a', a, m * n);
  for (let i = 0; i < m; i++) {
    let s = 0;
    for (let j = 0; j < n; j++) s += a[i * n + j]! * x[j]!;
    out[i] = s;
  }
  return out;
}

/** out(n) = a(m×n)ᵀ·x(m); out must not alias x. */
export function mulTransposeVec(out: Float64Array, a: Float64Array, x: Float64Array, m: number, n: number): Float64Array {
  checkLength('a', a, m * n);
  out.fill(0, 0, n);
  for (let i = 0; i < m; i++) {
    const xi = x[i]!;
    for (let j = 0; j < n; j++) out[j]! += a[i * n + j]! * xi;
  }
  return out;
}

/** Euclidean norm of the first n entries, overflow-safe by scaling (LAPACK dnrm2 idea). */
export function norm2(x: Float64Array, n = x.length): number {
  let scale = 0;
  for (let i = 0; i < n; i++) scale = Math.max(scale, Math.abs(x[i]!));
  if (scale === 0 || !Number.isFinite(scale)) return scale;
  let s = 0;
  for (let i = 0; i < n; i++) {
    const v = x[i]! / scale;
    s += v * v;
  }
  return scale * Math.sqrt(s);
}
