import { spawn } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { openDatabase } from '@plumbline/store';
import { describe, expect, it } from 'vitest';
import { createEmbeddedQueue } from './embedded.ts';
import { job } from './testing/queue-contract.ts';

const SCRIPT = fileURLToPath(new URL('./testing/embedded-worker-process.ts', import.meta.url));

function runWorker(dbPath: string, goFile: string, onReady: () => void): Promise<string[]> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, ['--import', 'tsx', SCRIPT, dbPath, goFile], { stdio: ['ignore', 'pipe', 'pipe'] });
    let out = '';
    let err = '';
    child.stdout.on('data', (d: Buffer) => {
      if (!out.includes('ready\n') && (out + d.toString()).includes('ready\n')) onReady();
      out += d.toString();
    });
    child.stderr.on('data', (d: Buffer) => (err += d.toString()));
    child.on('error', reject);
    child.on('exit', (code) => (code === 0 ? resolve(out.trim().split('\n').filter((l) => l && l !== 'ready')) : reject(new Error(`worker exited ${code}: ${err}`))));
  });
}

describe('embedded queue across processes', () => {
  it('two worker processes on one database handle every job exactly once', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'plumbline-mp-'));
    try {
      const path = join(dir, 'plumbline.db');
      const db = openDatabase(path);
      const queue = createEmbeddedQueue(db);
      for (let n = 0; n < 60; n++) await queue.enqueue(job(n), { jobId: `job-${n}` });
      await queue.close();
      db.close();

      const goFile = join(dir, 'go');
      let ready = 0;
      const start = () => {
        ready += 1;
        if (ready === 2) writeFileSync(goFile, '');
      };
      const lines = (await Promise.all([runWorker(path, goFile, start), runWorker(path, goFile, start)])).flat();
      const ids = lines.map((l) => l.split(' ')[1]);
      expect(ids).toHaveLength(60);
      expect(new Set(ids).size).toBe(60);
      expect(lines.every((l) => l.endsWith(' 1'))).toBe(true); // nobody lost a lease
      // both processes took part (they start together at the barrier; 60 jobs x 40 ms leave time for both)
      expect(new Set(lines.map((l) => l.split(' ')[0])).size).toBe(2);

      const check = openDatabase(path);
      expect(check.prepare("SELECT count(*) FROM jobs WHERE state = 'completed'").pluck().get()).toBe(60);
      check.close();
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  }, 30_000);
});
