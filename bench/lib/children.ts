/** Starting and stopping the benchmark's child processes (each benchmark side runs in a fresh Node process). */
import { spawn, type ChildProcess } from 'node:child_process';
import { fileURLToPath } from 'node:url';

const LIB = fileURLToPath(new URL('.', import.meta.url));

export interface ChildRun {
  stdout: string;
  stderr: string;
  code: number | null;
}

/** Runs `node [nodeArgs] --import tsx bench/lib/<script> args…` to the end and collects its output. */
export function runChild(script: string, args: string[], nodeArgs: string[] = []): Promise<ChildRun> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, [...nodeArgs, '--import', 'tsx', `${LIB}${script}`, ...args], { stdio: ['ignore', 'pipe', 'pipe'] });
    let stdout = '';
    let stderr = '';
    child.stdout.on('data', (c: Buffer) => (stdout += c.toString()));
    child.stderr.on('data', (c: Buffer) => (stderr += c.toString()));
    child.on('error', reject);
    child.on('close', (code) => resolve({ stdout, stderr, code }));
  });
}

/** The JSON after the last `<marker> ` line of a child's output; throws with the child's stderr when missing. */
export function markedJson<T>(run: Pick<ChildRun, 'stdout' | 'stderr'>, marker: string): T {
  const line = run.stdout.split('\n').reverse().find((l) => l.startsWith(`${marker} `));
  if (!line) throw new Error(`child printed no ${marker} line; stderr:\n${run.stderr.slice(-2000)}`);
  return JSON.parse(line.slice(marker.length + 1)) as T;
}

export interface ServerChild<T> {
  info: T & { port: number };
  stop(): Promise<void>;
}

/** Starts a long-running child and resolves once it prints `BENCH_READY {json}`. */
export function startServerChild<T>(script: string, args: string[]): Promise<ServerChild<T>> {
  return new Promise((resolve, reject) => {
    const child: ChildProcess = spawn(process.execPath, ['--import', 'tsx', `${LIB}${script}`, ...args], { stdio: ['ignore', 'pipe', 'pipe'] });
    let out = '';
    let err = '';
    const exited = new Promise<void>((r) => child.once('exit', () => r()));
    child.stderr!.on('data', (c: Buffer) => (err += c.toString()));
    child.stdout!.on('data', (c: Buffer) => {
      out += c.toString();
      const line = out.split('\n').find((l) => l.startsWith('BENCH_READY '));
      if (!line) return;
      out = '';
      const info = JSON.parse(line.slice('BENCH_READY '.length)) as T & { port: number };
      resolve({
        info,
        async stop() {
          child.kill('SIGTERM');
          await exited;
        },
      });
    });
    child.once('exit', (code) => reject(new Error(`${script} exited with ${code} before it was ready:\n${err.slice(-2000)}`)));
  });
}

/** Largest heap size before a collection in `--trace-gc` lines ("… 512.3 (530.1) -> …" MB), in bytes. */
export function heapPeakFromTraceGc(stdout: string): number | null {
  let peak = -1;
  for (const m of stdout.matchAll(/\s([\d.]+) \(([\d.]+)\) -> /g)) peak = Math.max(peak, Number(m[1]));
  return peak < 0 ? null : Math.round(peak * 1024 * 1024);
}
