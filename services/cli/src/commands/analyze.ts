import { readFile } from 'node:fs/promises';
import { Policy, type Report } from '@plumbline/contracts';
import { EXIT, InputError, parseFlags, UsageError, type Command } from '../args.ts';
import { analyze } from '../analysis.ts';

const USAGE = `Usage: plumbline analyze <bundle> [--json] [--policy FILE]

Analyses a bundle (directory, .tar.gz, .tar or .zip) on this machine, without a server.

  --json          print the full report (plumbline-report/1) as JSON instead of the summary
  --policy FILE   triage policy JSON (default: the built-in policy)

Exit codes: 0 sound, 1 doubtful, 2 unfit, ${EXIT.input} invalid bundle or policy, ${EXIT.usage} usage error,
${EXIT.internal} internal error.
`;

const VERDICT_EXIT: Record<Report['verdict'], number> = { sound: 0, doubtful: 1, unfit: 2 };

function num(v: number | null, digits = 3): string {
  return v === null ? '-' : Number(v.toPrecision(digits)).toString();
}

/** The human summary: run, verdict, score, then one line per flag with measured value against its threshold. */
export function formatSummary(r: Report): string {
  const lines = [
    `${r.run.robot_id}/${r.run.run_id} at ${r.run.site}, ${r.run.started_at}`,
    `  ${r.run.duration_s.toFixed(0)} s, ${r.run.distance_m.toFixed(0)} m`,
    `verdict: ${r.verdict.toUpperCase()}   score: ${r.score.toFixed(0)}/100`,
    '',
  ];
  if (r.flags.length === 0) lines.push('no flags');
  else {
    const rows = r.flags.map((f) => [f.severity, f.kind, `${f.t_start.toFixed(1)}–${f.t_end.toFixed(1)} s`, `${num(f.value)} ${f.unit}`, `${num(f.threshold)} ${f.unit}`, f.message]);
    const head = ['severity', 'kind', 'time', 'measured', 'threshold', 'meaning'];
    const widths = head.map((h, i) => Math.max(h.length, ...rows.map((row) => (row[i] ?? '').length)));
    const fmt = (row: string[]) => row.map((c, i) => (i === row.length - 1 ? c : c.padEnd(widths[i] ?? 0))).join('  ');
    lines.push(fmt(head), fmt(widths.map((w) => '-'.repeat(w))), ...rows.map(fmt));
  }
  return `${lines.join('\n')}\n`;
}

async function readPolicy(file: string): Promise<Policy> {
  let json: unknown;
  try {
    json = JSON.parse(await readFile(file, 'utf8'));
  } catch (err) {
    throw new InputError(`--policy ${file}: ${(err as Error).message}`);
  }
  const r = Policy.safeParse(json);
  if (!r.success) {
    const i = r.error.issues[0];
    throw new InputError(`--policy ${file}: ${i ? `${i.path.join('.') || '(root)'}: ${i.message}` : 'invalid policy'}`);
  }
  return r.data;
}

export const analyzeCommand: Command = {
  name: 'analyze',
  summary: 'analyse a bundle locally and print the verdict (exit code by verdict)',
  usage: USAGE,
  async run(argv) {
    const { values, positionals } = parseFlags(argv, { json: { type: 'boolean' }, policy: { type: 'string' } });
    const bundle = positionals[0];
    if (!bundle) throw new UsageError('a bundle path is required');
    const policy = values.policy ? await readPolicy(values.policy) : undefined;
    const report = await analyze(bundle, policy);
    process.stdout.write(values.json ? `${JSON.stringify(report, null, 2)}\n` : formatSummary(report));
    return VERDICT_EXIT[report.verdict];
  },
};
