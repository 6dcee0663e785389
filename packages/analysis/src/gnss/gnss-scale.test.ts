import { describe, expect, it } from 'vitest';
import { createRng, gaussian, makeOdometry } from '../estimators/test-signals.ts';
import type { FixTrack } from './fix-track.ts';
import { gnssScaleFindings } from './gnss-scale.ts';

const SPEED = 0.8, W = 30, H = 20, LEVER = Float64Array.of(0.3, 0, 0.5);

/** Point and heading at arc length s on a W × H rectangle (metres, radians). */
function onRectangle(s: number): [number, number, number] {
  const p = s % (2 * (W + H));
  if (p < W) return [p, 0, 0];
  if (p < W + H) return [W, p - W, Math.PI / 2];
  if (p < 2 * W + H) return [W - (p - W - H), H, Math.PI];
  return [0, H - (p - 2 * W - H), -Math.PI / 2];
}

/**
 * A monocular run around the rectangle: odometry (10 Hz) integrates the true motion divided by `scaleAt(t, d)`
 * (metres per odometry unit); fixes (5 Hz) are the true antenna positions, rotated 30° and shifted into ENU, with
 * 1.5 cm of horizontal noise (RTK, common practice).
 */
function run(durationS: number, scaleAt: (t: number, dM: number) => number) {
  const odo = makeOdometry(durationS * 10 + 1, 10);
  let ox = 0, oy = 0;
  for (let i = 0; i < odo.n; i++) {
    const t = odo.t[i]!, [x, y, yaw] = onRectangle(SPEED * t);
    if (i > 0) {
      const [px, py] = onRectangle(SPEED * odo.t[i - 1]!);
      const s = scaleAt(t, SPEED * t);
      ox += (x - px) / s;
      oy += (y - py) / s;
    }
    odo.x[i] = ox;
    odo.y[i] = oy;
    odo.qw[i] = Math.cos(yaw / 2);
    odo.qz[i] = Math.sin(yaw / 2);
  }
  const rng = createRng(7), k = durationS * 5 + 1, c = Math.cos(Math.PI / 6), sn = Math.sin(Math.PI / 6);
  const col = () => new Float64Array(k);
  const tr: FixTrack = { t: col(), e: col(), n: col(), u: col(), hacc: col().fill(0.015), fix: col().fill(4), ox: col(), oy: col(), oz: col() };
  for (let j = 0; j < k; j++) {
    const t = j / 5, [x, y, yaw] = onRectangle(SPEED * t);
    const ax = x + Math.cos(yaw) * LEVER[0]!, ay = y + Math.sin(yaw) * LEVER[0]!;
    tr.t[j] = t;
    tr.e[j] = 100 + c * ax - sn * ay + 0.015 * gaussian(rng);
    tr.n[j] = -40 + sn * ax + c * ay + 0.015 * gaussian(rng);
    tr.u[j] = LEVER[2]! + 0.02 * gaussian(rng);
  }
  return { odo, tr };
}

describe('scale step of monocular odometry against GNSS', () => {
  it('finds a 10 % step at 100 s within 0.5 s and its size within 1 %', () => {
    const { odo, tr } = run(200, (t) => (t < 100 ? 2 : 2.2));
    const f = gnssScaleFindings(tr, odo, LEVER, 2.1);
    const steps = f.filter((x) => x.detail.includes('step'));
    expect(steps).toHaveLength(1);
    // Tolerances: 0.5 s ≈ 2.5 fix intervals; 1 % of scale ≈ 3σ of a 20-s median of 10-s ratios (1.5 cm over 8 m).
    expect(Math.abs(0.5 * (steps[0]!.tStart + steps[0]!.tEnd) - 100)).toBeLessThan(0.5);
    expect(Math.abs(steps[0]!.value! - 10)).toBeLessThan(1);
  });
});

describe('scale drift of monocular odometry against GNSS', () => {
  it('measures 5 %/100 m as the scale change over the path within 1 %', () => {
    const { odo, tr } = run(240, (_t, d) => 2 * (1 + (0.05 * d) / 100));
    const f = gnssScaleFindings(tr, odo, LEVER, 2.1);
    expect(f.filter((x) => x.detail.includes('step'))).toEqual([]);
    const drift = f.filter((x) => x.detail.includes('drifts'));
    expect(drift).toHaveLength(1);
    const pathM = SPEED * (240 - 10); // centres of the first and last 10-s pairs
    expect(Math.abs(drift[0]!.value! - 5 * (pathM / 100))).toBeLessThan(1);
  });

  it('reports nothing of size on a constant scale (no step, no trend above 1 %)', () => {
    const { odo, tr } = run(240, () => 2);
    for (const x of gnssScaleFindings(tr, odo, LEVER, 2)) expect(Math.abs(x.value!)).toBeLessThan(1);
  });
});
