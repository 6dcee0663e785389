// Pose-graph benchmark: 30,000 SE(3) keyframes (100 laps of a 300 m route, 1 m apart) with noisy odometry
// and 500 loop closures to earlier laps. Run: node --import tsx packages/analysis/bench/pose-graph-bench.ts [planar]
import { createPoseGraph, createPoseGraphSolver, optimizePoseGraph } from '../src/loops/pose-graph.ts';

const mode = process.argv[2] === 'planar' ? 'planar' : 'se3';
const n = 30_000, loops = 500, lap = 300;
let seed = 12345;
const rand = () => ((seed = (Math.imul(seed, 1664525) + 1013904223) >>> 0) / 4294967296);
const g = createPoseGraph(mode, n, n - 1 + loops);
// True route: a 100 m × 50 m rectangle with rounded corners approximated by a turn of 90° over 1 m at corners.
const turnAt = new Set([99, 149, 249, 299]);
const yawTrue = new Float64Array(n), xT = new Float64Array(n), yT = new Float64Array(n);
for (let k = 1; k < n; k++) {
  const turn = turnAt.has((k - 1) % lap) ? Math.PI / 2 : 0;
  yawTrue[k] = yawTrue[k - 1]! + turn;
  xT[k] = xT[k - 1]! + Math.cos(yawTrue[k - 1]!);
  yT[k] = yT[k - 1]! + Math.sin(yawTrue[k - 1]!);
}
let ox = 0, oy = 0, oth = 0;
const setRot = (arr: Float64Array, o: number, th: number) => arr.set([Math.cos(th), -Math.sin(th), 0, Math.sin(th), Math.cos(th), 0, 0, 0, 1], o);
for (let k = 0; k < n; k++) {
  if (mode === 'se3') { g.t.set([ox, oy, 0], k * 3); setRot(g.R, k * 9, oth); } else g.s.set([ox, oy, oth], k * 3);
  if (k + 1 === n) break;
  const dth = yawTrue[k + 1]! - yawTrue[k]! + (rand() - 0.5) * 0.002 + 0.00005;
  const fwd = 1 + (rand() - 0.5) * 0.01;
  g.from[k] = k; g.to[k] = k + 1; g.infoT[k] = 1e3; g.infoR[k] = 1e5;
  if (mode === 'se3') { g.measT.set([fwd, 0, 0], k * 3); setRot(g.measR, k * 9, dth); } else g.measP.set([fwd, 0, dth], k * 3);
  ox += fwd * Math.cos(oth); oy += fwd * Math.sin(oth); oth += dth;
}
for (let l = 0; l < loops; l++) {
  const e = n - 1 + l;
  const b = lap + Math.floor(rand() * (n - lap)), a = b - lap * (1 + Math.floor(rand() * Math.min(5, Math.floor(b / lap))));
  g.from[e] = a; g.to[e] = b; g.infoT[e] = 1e2; g.infoR[e] = 1e4;
  // Truth relative pose of b seen from a.
  const c = Math.cos(yawTrue[a]!), s = Math.sin(yawTrue[a]!), dx = xT[b]! - xT[a]!, dy = yT[b]! - yT[a]!;
  const rx = c * dx + s * dy, ry = -s * dx + c * dy, rth = yawTrue[b]! - yawTrue[a]!;
  if (mode === 'se3') { g.measT.set([rx, ry, 0], e * 3); setRot(g.measR, e * 9, rth); } else g.measP.set([rx, ry, rth], e * 3);
}
const cpu0 = process.cpuUsage();
const t0 = performance.now();
const solver = createPoseGraphSolver(g);
const t1 = performance.now();
const res = optimizePoseGraph(g, solver);
const t2 = performance.now();
const cpu = process.cpuUsage(cpu0);
let worst = 0;
for (let k = 0; k < n; k++) {
  const x = mode === 'se3' ? g.t[k * 3]! : g.s[k * 3]!, y = mode === 'se3' ? g.t[k * 3 + 1]! : g.s[k * 3 + 1]!;
  worst = Math.max(worst, Math.hypot(x - xT[k]!, y - yT[k]!));
}
process.stdout.write(
  `${mode}: ${n} keyframes, ${loops} loops: ordering+symbolic ${(t1 - t0).toFixed(0)} ms, ` +
    `LM ${(t2 - t1).toFixed(0)} ms (${res.iterations} iterations, ${res.solves} solves, factor blocks ${solver.chol.factorBlocks}), ` +
    `total ${(t2 - t0).toFixed(0)} ms wall, ${((cpu.user + cpu.system) / 1000).toFixed(0)} ms CPU; cost ${res.initialCost.toExponential(3)} -> ${res.finalCost.toExponential(3)}; ` +
    `worst position error vs truth ${worst.toFixed(2)} m\n`,
);
