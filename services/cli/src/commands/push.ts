import { loadConfig } from '@plumbline/config';
import { EXIT, parseFlags, UsageError, type Command } from '../args.ts';
import { PushRefusedError, PushUnavailableError, pushBundle } from '../push-client.ts';

const USAGE = `Usage: plumbline push <bundle> [--server URL] [--token T] [--chunk-mib N]

Uploads a run bundle (a directory, packed to .tar.gz on the fly, or a .tar.gz/.tar/.zip archive) with a resumable
upload: after a dropped connection it asks the server how many bytes it holds and continues from there.
Failures are retried with exponential backoff.

  --server URL     API base URL (default PLUMBLINE_PUBLIC_URL, else http://PLUMBLINE_HOST:PLUMBLINE_PORT)
  --token T        robot (or admin) token (default PLUMBLINE_TOKEN)
  --chunk-mib N    chunk size in MiB (default 8)

Exit codes: 0 stored (new or already there), ${EXIT.input} refused by the server or invalid bundle,
${EXIT.unavailable} server unreachable after retries, ${EXIT.usage} usage error.
`;

const MiB = 1024 * 1024;

function progressBar(sent: number, total: number): string {
  const width = 30;
  const frac = total > 0 ? sent / total : 1;
  const full = Math.round(frac * width);
  return `[${'#'.repeat(full)}${' '.repeat(width - full)}] ${(frac * 100).toFixed(0).padStart(3)}% ${(sent / MiB).toFixed(1)}/${(total / MiB).toFixed(1)} MiB`;
}

export const pushCommand: Command = {
  name: 'push',
  summary: 'upload a run bundle to a Plumbline server (resumable)',
  usage: USAGE,
  async run(argv) {
    const { values, positionals } = parseFlags(argv, { server: { type: 'string' }, token: { type: 'string' }, 'chunk-mib': { type: 'string' } });
    const bundle = positionals[0];
    if (!bundle) throw new UsageError('a bundle path is required');
    const config = loadConfig();
    const server = values.server ?? config.publicUrl ?? `http://${config.host}:${config.port}`;
    const token = values.token ?? config.token;
    if (!token) throw new UsageError('--token is required (or set PLUMBLINE_TOKEN)');
    const chunkMiB = values['chunk-mib'] ? Number(values['chunk-mib']) : 8;
    if (!(chunkMiB > 0 && chunkMiB <= 256)) throw new UsageError('--chunk-mib must be a number in (0, 256]');
    const tty = process.stderr.isTTY === true;
    let lastPlain = -1;
    try {
      const r = await pushBundle({
        bundle,
        server,
        token,
        chunkBytes: Math.round(chunkMiB * MiB),
        onProgress: (sent, total) => {
          if (tty) process.stderr.write(`\r${progressBar(sent, total)}`);
          else {
            const pct = total > 0 ? Math.floor((sent / total) * 10) * 10 : 100;
            if (pct !== lastPlain) process.stderr.write(`sent ${sent} of ${total} bytes (${pct}%)\n`);
            lastPlain = pct;
          }
        },
        onNotice: (line) => process.stderr.write(`${tty ? '\n' : ''}${line}\n`),
      });
      if (tty) process.stderr.write('\n');
      process.stdout.write(
        `${r.created ? 'stored' : 'already stored'}: run ${r.run.id} (${r.run.robot_id}/${r.run.run_id}), status ${r.run.status}, sha256 ${r.sha256}\n`,
      );
      return EXIT.ok;
    } catch (err) {
      if (tty) process.stderr.write('\n');
      if (err instanceof PushRefusedError) {
        process.stderr.write(`plumbline push: refused: ${err.message}\n`);
        return EXIT.input;
      }
      if (err instanceof PushUnavailableError) {
        process.stderr.write(`plumbline push: ${err.message}\n`);
        return EXIT.unavailable;
      }
      throw err;
    }
  },
};
