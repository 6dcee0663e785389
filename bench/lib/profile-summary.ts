/**
 * Summarises a V8 .cpuprofile (from `node --cpu-prof`): self time and inclusive time per function, top N.
 * Usage: node --import tsx bench/lib/profile-summary.ts <file.cpuprofile> [N]
 */
import { readFileSync } from 'node:fs';

interface Node { id: number; callFrame: { functionName: string; url: string; lineNumber: number }; children?: number[] }
interface Profile { nodes: Node[]; samples: number[]; timeDeltas: number[] }

const [file, nArg] = process.argv.slice(2);
if (!file) throw new Error('usage: profile-summary.ts <file.cpuprofile> [N]');
const p = JSON.parse(readFileSync(file, 'utf8')) as Profile;
const byId = new Map(p.nodes.map((n) => [n.id, n]));
const parent = new Map<number, number>();
for (const n of p.nodes) for (const c of n.children ?? []) parent.set(c, n.id);
const self = new Map<number, number>();
p.samples.forEach((id, i) => self.set(id, (self.get(id) ?? 0) + (p.timeDeltas[i] ?? 0)));
const key = (n: Node) => `${n.callFrame.functionName || '(anon)'} ${n.callFrame.url.replace(/^.*\/work\/main\//, '')}:${n.callFrame.lineNumber + 1}`;
const selfBy = new Map<string, number>();
const totalBy = new Map<string, number>();
for (const [id, us] of self) {
  const n = byId.get(id)!;
  selfBy.set(key(n), (selfBy.get(key(n)) ?? 0) + us);
  const seen = new Set<string>();
  for (let cur: number | undefined = id; cur !== undefined; cur = parent.get(cur)) {
    const k = key(byId.get(cur)!);
    if (seen.has(k)) continue;
    seen.add(k);
    totalBy.set(k, (totalBy.get(k) ?? 0) + us);
  }
}
const top = Number(nArg ?? 25);
const show = (title: string, m: Map<string, number>) => {
  console.log(title);
  for (const [k, us] of [...m].sort((a, b) => b[1] - a[1]).slice(0, top)) console.log(`${(us / 1e6).toFixed(2).padStart(8)} s  ${k}`);
};
show('self time', selfBy);
show('inclusive time', totalBy);
