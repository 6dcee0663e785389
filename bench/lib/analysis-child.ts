/**
 * Child process of the analysis benchmarks: `read` parses the bundle alone (readBundle), `analyze` runs the whole
 * analysis as the worker service does (analyzeBundle, parallel: GNSS, loops and pose graph on a second thread),
 * `analyze-serial` the same on one thread. Runs in its own fresh process so maxRSS belongs to one side only. Prints one line
 * `BENCH_RESULT {json}`; the parent starts it with --trace-gc and takes the V8 heap peak from those lines.
 * Usage: node --trace-gc --import tsx bench/lib/analysis-child.ts <read|analyze|analyze-serial> <bundle path>
 */
import { readBundle, type Bundle } from '@plumbline/bundle';
import { analyzeBundle } from '@plumbline/analysis';

/** Sum of byteLength of every typed array column of a parsed bundle. */
export function columnarBytes(b: Pick<Bundle, 'imu' | 'odometry' | 'gnss' | 'loops'>): number {
  let sum = 0;
  for (const cols of [b.imu, b.odometry, b.gnss, b.loops]) {
    if (!cols) continue;
    for (const v of Object.values(cols)) if (ArrayBuffer.isView(v)) sum += v.byteLength;
  }
  return sum;
}

async function main(): Promise<void> {
  const [mode, path] = process.argv.slice(2);
  if ((mode !== 'read' && mode !== 'analyze' && mode !== 'analyze-serial') || !path) throw new Error('usage: analysis-child.ts <read|analyze|analyze-serial> <bundle>');
  const t0 = performance.now();
  const out: Record<string, unknown> = { mode };
  if (mode === 'read') {
    const b = await readBundle(path);
    out.seconds = (performance.now() - t0) / 1000;
    out.columnarBytes = columnarBytes(b);
    out.counts = { imu: b.imu.n, odometry: b.odometry.n, gnss: b.gnss?.n ?? 0, loops: b.loops?.n ?? 0 };
  } else {
    const report = await analyzeBundle(path, undefined, { parallel: mode === 'analyze' });
    out.seconds = (performance.now() - t0) / 1000;
    out.verdict = report.verdict;
    out.flags = report.flags.length;
    out.reportBytes = Buffer.byteLength(JSON.stringify(report));
  }
  const usage = process.resourceUsage();
  out.maxRssBytes = usage.maxRSS * 1024;
  // CPU time of the whole process (start-up included), µs: on a shared machine the figure to plan capacity with
  out.cpuSeconds = (usage.userCPUTime + usage.systemCPUTime) / 1e6;
  console.log(`BENCH_RESULT ${JSON.stringify(out)}`);
}

if (import.meta.url === `file://${process.argv[1]}`) await main();
