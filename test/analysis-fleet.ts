/**
 * Shared helpers of the analysis acceptance test: analyses the demo fleet in seed-runs/ and scores detections
 * against truth.json (intersection over union of flagged intervals with the injected fault intervals).
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { analyzeBundle } from '@plumbline/analysis';
import type { Flag, Report } from '@plumbline/contracts';

export const SEED_DIR = new URL('../seed-runs/', import.meta.url).pathname;

export interface FleetEntry {
  robot_id: string;
  run_id: string;
  bundle: string;
  truth: string;
  faults: string[];
}

export interface TruthFault {
  kind: string;
  t_start: number;
  t_end: number;
  magnitude: number;
}

export interface AnalysedRun {
  entry: FleetEntry;
  report: Report;
  faults: TruthFault[];
  t0Truth: number;
}

export async function analyseFleet(): Promise<AnalysedRun[]> {
  const fleet = JSON.parse(readFileSync(join(SEED_DIR, 'fleet.json'), 'utf8')) as FleetEntry[];
  const out: AnalysedRun[] = [];
  for (const entry of fleet) {
    const truth = JSON.parse(readFileSync(join(SEED_DIR, entry.truth), 'utf8')) as { t_start: number; faults: TruthFault[] };
    const report = await analyzeBundle(join(SEED_DIR, entry.bundle));
    out.push({ entry, report, faults: truth.faults, t0Truth: truth.t_start });
  }
  return out;
}

/** Intervals shorter than 2 s are widened to 2 s about their centre so instants (pose jumps) can be matched. */
function widen(a: number, b: number): [number, number] {
  if (b - a >= 2) return [a, b];
  const c = (a + b) / 2;
  return [c - 1, c + 1];
}

/** IoU of the union of the flags' intervals (run seconds) with the truth interval (epoch → run seconds). */
export function intersectionOverUnion(flags: Flag[], truth: TruthFault, t0: number): number {
  const [ts, te] = widen(truth.t_start - t0, truth.t_end - t0);
  const iv = flags.map((f) => widen(f.t_start, f.t_end)).sort((x, y) => x[0] - y[0]);
  const merged: Array<[number, number]> = [];
  for (const [a, b] of iv) {
    const last = merged[merged.length - 1];
    if (last && a <= last[1]) last[1] = Math.max(last[1], b);
    else merged.push([a, b]);
  }
  let inter = 0, flagged = 0;
  for (const [a, b] of merged) {
    flagged += b - a;
    inter += Math.max(0, Math.min(b, te) - Math.max(a, ts));
  }
  const union = flagged + (te - ts) - inter;
  return union > 0 ? inter / union : 0;
}

export const raised = (r: Report): Flag[] => r.flags.filter((f) => f.severity !== 'info');
