import { describe, expect, it } from 'vitest';
import { allanDeviation } from './allan.ts';
import { createRng, gaussian } from './test-signals.ts';

const tau0 = 0.01;
const ms = [1, 2, 4, 8, 16, 32, 64, 128];

function slope(adev: Float64Array, i: number, j: number): number {
  return Math.log(adev[j]! / adev[i]!) / Math.log(ms[j]! / ms[i]!);
}

describe('Allan deviation of white rate noise', () => {
  it('has slope −½ and σ(1 s) = N (IEEE Std 952-1997, Annex C — from memory)', () => {
    const rng = createRng(7);
    const N = 0.002; // density, units/√Hz
    const x = new Float64Array(200_000);
    for (let i = 0; i < x.length; i++) x[i] = (N / Math.sqrt(tau0)) * gaussian(rng);
    const adev = allanDeviation(x, tau0, [...ms, 100]);
    // Slope over τ = 0.01…1.28 s; estimator scatter at 2000 s of data is a few percent.
    expect(slope(adev, 0, 7)).toBeCloseTo(-0.5, 1);
    expect(Math.abs(adev[8]! / N - 1)).toBeLessThan(0.05); // τ = 1 s
  });
});

describe('Allan deviation of rate random walk', () => {
  it('has slope +½ and σ(τ) = K√(τ/3) (IEEE Std 952-1997, Annex C — from memory)', () => {
    const rng = createRng(11);
    const K = 0.001; // units/s/√Hz
    const x = new Float64Array(200_000);
    let b = 0;
    for (let i = 0; i < x.length; i++) {
      b += K * Math.sqrt(tau0) * gaussian(rng);
      x[i] = b;
    }
    const big = [100, 200, 400, 800];
    const adev = allanDeviation(x, tau0, big);
    expect(Math.log(adev[3]! / adev[0]!) / Math.log(8)).toBeCloseTo(0.5, 1);
    // τ = 2 s: σ = K·√(2/3); relative estimator scatter ~10 % at this record length.
    expect(Math.abs(adev[1]! / (K * Math.sqrt(2 / 3)) - 1)).toBeLessThan(0.2);
  });
});
