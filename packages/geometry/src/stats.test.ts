import { describe, it, expect } from 'vitest';
import * as stats from './stats.ts';
import { expectClose } from './testing.ts';

describe('chi-square quantiles against NIST/SEMATECH e-Handbook §1.3.6.7.4', () => {
  // NIST/SEMATECH e-Handbook of Statistical Methods, §1.3.6.7.4, critical values of the chi-square distribution
  // (upper-tail points, tabulated to 3 decimals ⇒ tolerance 5e-4).
  const upper5 = [[1, 3.841], [2, 5.991], [3, 7.815], [6, 12.592]] as const;
  const upper1 = [[1, 6.635], [3, 11.345], [6, 16.812]] as const;
  for (const [k, v] of upper5) {
    it(`upper 5 % point, ${k} dof = ${v}`, () => {
      expectClose(stats.chiSquareQuantile(0.95, k), v, 5e-4, `χ²(0.95, ${k})`);
      expectClose(stats.chiSquareSurvival(v, k), 0.05, 1e-4, `tail at ${v}`);
    });
  }
  for (const [k, v] of upper1) {
    it(`upper 1 % point, ${k} dof = ${v}`, () => {
      expectClose(stats.chiSquareQuantile(0.99, k), v, 5e-4, `χ²(0.99, ${k})`);
    });
  }
  it('k = 2 has the closed form F(x) = 1 − exp(−x/2) (exponential distribution)', () => {
    for (const x of [0.01, 0.5, 2, 7.3, 30]) expectClose(stats.chiSquareCdf(x, 2), 1 - Math.exp(-x / 2), 1e-15, `F(${x}; 2)`);
    expectClose(stats.chiSquareQuantile(0.95, 2), -2 * Math.log(0.05), 1e-12, 'q(0.95; 2)');
    expectClose(stats.chiSquareSurvival(100, 2), Math.exp(-50), 1e-30, 'far tail');
  });
  it('quantile inverts the CDF across dof 1..200 and p 1e-6..0.999999', () => {
    for (const k of [1, 2, 3, 5, 6, 10, 30, 200]) {
      for (const p of [1e-6, 0.01, 0.05, 0.5, 0.95, 0.99, 0.999999]) {
        const x = stats.chiSquareQuantile(p, k);
        expectClose(stats.chiSquareCdf(x, k), p, 1e-12, `F(q(${p}; ${k}))`);
      }
    }
    expect(Number.isNaN(stats.chiSquareQuantile(-0.1, 3))).toBe(true);
    expect(stats.chiSquareQuantile(1, 3)).toBe(Infinity);
  });
});

describe('normal distribution against standard normal tables', () => {
  it('z(0.975) = 1.960 and z(0.995) = 2.576', () => {
    // Standard normal tables (NIST/SEMATECH e-Handbook §1.3.6.7.1), 3 decimals ⇒ tolerance 5e-4
    expectClose(stats.normalQuantile(0.975), 1.96, 5e-4, 'z(0.975)');
    expectClose(stats.normalQuantile(0.995), 2.576, 5e-4, 'z(0.995)');
  });
  it('Φ at tabulated points (Abramowitz & Stegun Table 26.1, from memory) and symmetry', () => {
    expectClose(stats.normalCdf(0), 0.5, 1e-16, 'Φ(0)');
    expectClose(stats.normalCdf(1), 0.8413447460685429, 1e-15, 'Φ(1)');
    expectClose(stats.normalCdf(1.96), 0.9750021048517795, 1e-15, 'Φ(1.96)');
    expectClose(stats.normalCdf(-3), 0.0013498980316301, 1e-16, 'Φ(−3)');
    for (const x of [0.1, 0.7, 2.2, 5]) expectClose(stats.normalCdf(x) + stats.normalCdf(-x), 1, 1e-15, `symmetry ${x}`);
  });
  it('quantile inverts the CDF from 1e-12 to 1 − 1e-12', () => {
    for (const p of [1e-12, 1e-6, 0.001, 0.02, 0.3, 0.5, 0.77, 0.975, 0.999, 1 - 1e-9]) {
      const z = stats.normalQuantile(p);
      expectClose(stats.normalCdf(z), p, 1e-14 * Math.max(p, 1e-3), `Φ(Φ⁻¹(${p}))`);
    }
    expect(stats.normalQuantile(0)).toBe(-Infinity);
  });
});

describe('logGamma and the incomplete gamma function', () => {
  it('lnΓ(n) = ln((n−1)!) and Γ(½) = √π (exact identities)', () => {
    let f = 1;
    for (let n = 1; n < 25; n++) {
      expectClose(stats.logGamma(n), Math.log(f), 1e-13 * Math.max(1, Math.log(f)), `lnΓ(${n})`);
      f *= n;
    }
    expectClose(stats.logGamma(0.5), 0.5 * Math.log(Math.PI), 1e-14, 'lnΓ(½)');
    expectClose(stats.logGamma(0.1), Math.log(9.513507698668732), 1e-13, 'lnΓ(0.1) via reflection');
  });
  it('P(1, x) = 1 − e^{−x} and P + Q = 1', () => {
    for (const x of [0.2, 1, 3, 12]) {
      expectClose(stats.regularizedGammaP(1, x), 1 - Math.exp(-x), 1e-15, `P(1, ${x})`);
      expectClose(stats.regularizedGammaP(4.5, x) + stats.regularizedGammaQ(4.5, x), 1, 1e-15, `P+Q at ${x}`);
    }
    expect(Number.isNaN(stats.regularizedGammaP(-1, 2))).toBe(true);
  });
});
