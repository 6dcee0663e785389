import { spawnSync } from 'node:child_process';
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, afterEach, beforeAll, describe, expect, it, vi } from 'vitest';
import { main } from '../services/cli/src/main.ts';
import { simulateBundle } from './service-flow.ts';

const BIN = fileURLToPath(new URL('../services/cli/bin/plumbline.js', import.meta.url));
let dataDir: string;
const savedEnv = { ...process.env };
beforeAll(async () => {
  dataDir = await mkdtemp(join(tmpdir(), 'plumbline-cli-'));
});
afterEach(() => {
  process.env = { ...savedEnv };
});
afterAll(async () => rm(dataDir, { recursive: true, force: true }));

/** Runs the command in this process with the given environment, capturing stdout and stderr. */
async function plumbline(args: string[], env: Record<string, string> = {}) {
  process.env = { ...savedEnv, PLUMBLINE_DATA_DIR: dataDir, ...env };
  let out = '';
  let err = '';
  const o = vi.spyOn(process.stdout, 'write').mockImplementation((c) => ((out += String(c)), true));
  const e = vi.spyOn(process.stderr, 'write').mockImplementation((c) => ((err += String(c)), true));
  try {
    const code = await main(args);
    return { code, out, err };
  } finally {
    o.mockRestore();
    e.mockRestore();
  }
}

describe('the plumbline binary', () => {
  it('runs through its JS shim and lists the commands', () => {
    const r = spawnSync(process.execPath, [BIN, 'help'], { encoding: 'utf8' });
    expect(r.status).toBe(0);
    for (const c of ['serve', 'push', 'analyze', 'simulate', 'token']) expect(r.stdout).toContain(`  ${c}`);
  });
});

describe('help and usage errors', () => {
  it('gives each command its own help', async () => {
    const p = await plumbline(['push', '--help']);
    expect(p.code).toBe(0);
    expect(p.out).toMatch(/^Usage: plumbline push <bundle>/);
    expect((await plumbline(['help', 'token'])).out).toMatch(/plumbline token create --role/);
  });
  it('exits 64 on an unknown command or flag, naming it', async () => {
    const u = await plumbline(['frobnicate']);
    expect(u.code).toBe(64);
    expect(u.err).toContain('unknown command "frobnicate"');
    const f = await plumbline(['token', 'list', '--colour']);
    expect(f.code).toBe(64);
    expect(f.err).toContain('--colour');
  });
  it('exits 64 with the variable named on a bad configuration', async () => {
    const r = await plumbline(['token', 'list'], { PLUMBLINE_LOG_LEVEL: 'shouty' });
    expect(r.code).toBe(64);
    expect(r.err).toContain('PLUMBLINE_LOG_LEVEL is "shouty"');
  });
});

describe('plumbline token', () => {
  it('creates a token printed once, lists it, revokes it', async () => {
    const c = await plumbline(['token', 'create', '--role', 'lead', '--name', 'night-shift', '--json']);
    expect(c.code, c.err).toBe(0);
    const { token, info } = JSON.parse(c.out) as { token: string; info: { id: string } };
    expect(token).toMatch(/^plb_/);
    const l = await plumbline(['token', 'list']);
    expect(l.out).toContain(`${info.id}\tlead\tnight-shift\t-\tactive`);
    expect(l.out).not.toContain(token);
    expect((await plumbline(['token', 'revoke', info.id])).code).toBe(0);
    expect((await plumbline(['token', 'list'])).out).toMatch(/night-shift\t-\trevoked /);
    expect((await plumbline(['token', 'revoke', info.id])).code).toBe(65);
    expect((await plumbline(['token', 'create', '--role', 'robot', '--name', 'x'])).code).toBe(64);
  });
});

describe('plumbline analyze', () => {
  it('prints the report and exits by verdict (0 sound, 1 doubtful, 2 unfit); 65 for a non-bundle', async () => {
    const b = await simulateBundle('cli-analyze', 20);
    try {
      const json = await plumbline(['analyze', b.path, '--json']);
      const report = JSON.parse(json.out) as { verdict: 'sound' | 'doubtful' | 'unfit'; score: number; run: { run_id: string } };
      expect(report.run.run_id).toBe('cli-analyze');
      expect(json.code).toBe({ sound: 0, doubtful: 1, unfit: 2 }[report.verdict]);
      const human = await plumbline(['analyze', b.path]);
      expect(human.code).toBe(json.code);
      expect(human.out).toContain(`verdict: ${report.verdict.toUpperCase()}   score: ${report.score.toFixed(0)}/100`);
      const bad = await plumbline(['analyze', fileURLToPath(import.meta.url)]);
      expect(bad.code).toBe(65);
      expect(bad.err).toContain('invalid bundle');
    } finally {
      await b.cleanup();
    }
  });
});
