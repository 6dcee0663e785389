/**
 * Shift analysis against its baseline, each side in a fresh child process: `readBundle` alone (read + gunzip +
 * parse into columns) and `analyzeBundle` (the same read plus the whole analysis) as the worker service runs it, with
 * GNSS, loops and pose graph on a second thread; the one-thread analysis is measured too, for its CPU and wall time. Memory: the child's maxRSS from
 * process.resourceUsage() and the V8 heap peak from --trace-gc, against the byte size of the parsed columns.
 */
import { heapPeakFromTraceGc, markedJson, runChild } from './children.ts';

export interface AnalysisSide {
  seconds: number;
  /** user + system CPU seconds of the child process */
  cpuSeconds: number;
  maxRssBytes: number;
  heapPeakBytes: number | null;
}

export interface ShiftAnalysisResult {
  counts: { imu: number; odometry: number; gnss: number; loops: number };
  columnarBytes: number;
  read: AnalysisSide;
  analyze: AnalysisSide & { verdict: string; flags: number; reportBytes: number };
  /** the same analysis on one thread */
  serial?: AnalysisSide;
  /** analyze seconds ÷ read seconds */
  timeRatio: number;
  /** analyze maxRSS ÷ columnar bytes */
  rssRatio: number;
}

interface ChildOut {
  seconds: number;
  cpuSeconds: number;
  maxRssBytes: number;
  columnarBytes?: number;
  counts?: ShiftAnalysisResult['counts'];
  verdict?: string;
  flags?: number;
  reportBytes?: number;
}

async function side(mode: 'read' | 'analyze' | 'analyze-serial', bundle: string): Promise<ChildOut & { heapPeakBytes: number | null }> {
  const run = await runChild('analysis-child.ts', [mode, bundle], ['--trace-gc']);
  if (run.code !== 0) throw new Error(`analysis child (${mode}) exited with ${run.code}:\n${run.stderr.slice(-2000)}`);
  return { ...markedJson<ChildOut>(run, 'BENCH_RESULT'), heapPeakBytes: heapPeakFromTraceGc(run.stdout) };
}

export async function benchShiftAnalysis(bundle: string): Promise<ShiftAnalysisResult> {
  const read = await side('read', bundle);
  const analyze = await side('analyze', bundle);
  const serial = await side('analyze-serial', bundle);
  if (serial.verdict !== analyze.verdict || serial.flags !== analyze.flags || serial.reportBytes !== analyze.reportBytes) {
    throw new Error(`the one-thread analysis differs from the two-thread one (${serial.verdict}/${serial.flags}/${serial.reportBytes} vs ${analyze.verdict}/${analyze.flags}/${analyze.reportBytes})`);
  }
  const columnarBytes = read.columnarBytes ?? 0;
  return {
    counts: read.counts ?? { imu: 0, odometry: 0, gnss: 0, loops: 0 },
    columnarBytes,
    read: { seconds: read.seconds, cpuSeconds: read.cpuSeconds, maxRssBytes: read.maxRssBytes, heapPeakBytes: read.heapPeakBytes },
    analyze: { seconds: analyze.seconds, cpuSeconds: analyze.cpuSeconds, maxRssBytes: analyze.maxRssBytes, heapPeakBytes: analyze.heapPeakBytes, verdict: analyze.verdict ?? '', flags: analyze.flags ?? 0, reportBytes: analyze.reportBytes ?? 0 },
    serial: { seconds: serial.seconds, cpuSeconds: serial.cpuSeconds, maxRssBytes: serial.maxRssBytes, heapPeakBytes: serial.heapPeakBytes },
    timeRatio: analyze.seconds / read.seconds,
    rssRatio: analyze.maxRssBytes / columnarBytes,
  };
}
