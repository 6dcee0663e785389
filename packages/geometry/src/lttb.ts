/**
 * Largest-Triangle-Three-Buckets downsampling for charts: picks `count` indices of a series (x ascending) that keep
 * its visual shape, spikes included. Method: S. Steinarsson, "Downsampling Time Series for Visual Representation",
 * MSc thesis, University of Iceland, 2013 (LTTB): first and last points kept; the rest split into count − 2
 * equal buckets; in each bucket the point forming the largest triangle with the previously kept point and the
 * average of the next bucket is kept. O(n), no allocation besides the output.
 *
 * NaN gaps (NaN in x or y): each finite run is downsampled on its own with a share of the budget proportional to
 * its length, its first and last points are always kept, and one NaN index per interior gap is returned so that a
 * chart still draws the break. When the budget is smaller than that minimum, gaps are bridged (finite points only).
 */

/** LTTB on the finite points idx[from..to] (inclusive, positions into idx), writing `budget` indices into out at pos. */
function lttbRun(out: Int32Array, pos: number, x: Float64Array, y: Float64Array, idx: Int32Array, from: number, to: number, budget: number): number {
  const len = to - from + 1;
  if (budget >= len) {
    for (let k = from; k <= to; k++) out[pos++] = idx[k]!;
    return pos;
  }
  out[pos++] = idx[from]!;
  if (budget === 1) return pos;
  const every = (len - 2) / (budget - 2);
  let a = idx[from]!;
  for (let i = 0; i < budget - 2; i++) {
    // next bucket average (the last bucket's "next" is the final point)
    const nStart = from + Math.floor((i + 1) * every) + 1;
    const nEnd = Math.min(from + Math.floor((i + 2) * every) + 1, to + 1);
    let avgX = 0, avgY = 0;
    for (let k = nStart; k < nEnd; k++) {
      avgX += x[idx[k]!]!;
      avgY += y[idx[k]!]!;
    }
    const nCount = nEnd - nStart;
    avgX /= nCount;
    avgY /= nCount;
    const bStart = from + Math.floor(i * every) + 1;
    const bEnd = from + Math.floor((i + 1) * every) + 1;
    const ax = x[a]!, ay = y[a]!;
    let best = -1, bestArea = -1;
    for (let k = bStart; k < bEnd; k++) {
      const j = idx[k]!;
      // twice the triangle area; the factor ½ does not change the argmax
      const area = Math.abs((ax - avgX) * (y[j]! - ay) - (ax - x[j]!) * (avgY - ay));
      if (area > bestArea) {
        bestArea = area;
        best = j;
      }
    }
    out[pos++] = best;
    a = best;
  }
  out[pos++] = idx[to]!;
  return pos;
}

/**
 * Indices (ascending Int32Array of length min(count, n)) of the points to draw. `x` must be non-decreasing over
 * its finite values. count < 3 keeps the first and/or last finite point.
 */
export function lttb(x: Float64Array, y: Float64Array, count: number): Int32Array {
  const n = x.length;
  if (y.length !== n) throw new RangeError(`lttb: x has ${n} values, y ${y.length}`);
  const m = Math.max(0, Math.min(Math.floor(count), n));
  if (m === n) return Int32Array.from({ length: n }, (_, i) => i);
  // finite indices, run boundaries (positions in `fin`) and one NaN marker per interior gap
  const fin = new Int32Array(n);
  let f = 0;
  for (let i = 0; i < n; i++) if (Number.isFinite(x[i]! + y[i]!)) fin[f++] = i;
  const runEnds: number[] = [];
  for (let k = 0; k < f; k++) if (k === f - 1 || fin[k + 1]! !== fin[k]! + 1) runEnds.push(k);
  const gaps = runEnds.length - 1;
  let minimum = gaps;
  let start = 0;
  for (const end of runEnds) {
    minimum += Math.min(2, end - start + 1);
    start = end + 1;
  }
  const out = new Int32Array(m);
  let pos: number;
  if (f === 0 || m === 0) pos = 0;
  else if (m < minimum || gaps === 0) pos = lttbRun(out, 0, x, y, fin, 0, f - 1, Math.min(m, f));
  else pos = perRun(out, x, y, fin, runEnds, m - gaps);
  return fillWithUnused(out, pos, n);
}

/** Splits `budget` over the runs (largest remainder, each run ≥ min(2, len)), inserting one gap marker between runs. */
function perRun(out: Int32Array, x: Float64Array, y: Float64Array, fin: Int32Array, runEnds: number[], budget: number): number {
  const r = runEnds.length;
  const len = new Float64Array(r), share = new Int32Array(r), frac = new Float64Array(r);
  let start = 0, base = 0, extraLen = 0;
  for (let k = 0; k < r; k++) {
    len[k] = runEnds[k]! - start + 1;
    share[k] = Math.min(2, len[k]!);
    base += share[k]!;
    extraLen += len[k]! - share[k]!;
    start = runEnds[k]! + 1;
  }
  let left = Math.min(budget - base, extraLen);
  const total = left;
  for (let k = 0; k < r && extraLen > 0; k++) {
    const exact = (total * (len[k]! - share[k]!)) / extraLen;
    const whole = Math.floor(exact);
    share[k]! += whole;
    frac[k] = exact - whole;
    left -= whole;
  }
  while (left > 0) {
    let best = -1;
    for (let k = 0; k < r; k++) if (share[k]! < len[k]! && (best < 0 || frac[k]! > frac[best]!)) best = k;
    share[best]!++;
    frac[best] = -1;
    left--;
  }
  let pos = 0;
  start = 0;
  for (let k = 0; k < r; k++) {
    pos = lttbRun(out, pos, x, y, fin, start, runEnds[k]!, share[k]!);
    if (k < r - 1) out[pos++] = fin[runEnds[k]!]! + 1; // first NaN index of the gap after this run
    start = runEnds[k]! + 1;
  }
  return pos;
}

/** When the budget exceeds the useful points, pad with the lowest unused indices so the length is exact; sorts. */
function fillWithUnused(out: Int32Array, pos: number, n: number): Int32Array {
  if (pos < out.length) {
    const used = new Uint8Array(n);
    for (let k = 0; k < pos; k++) used[out[k]!] = 1;
    for (let i = 0; i < n && pos < out.length; i++) if (!used[i]) out[pos++] = i;
  }
  return out.sort();
}
