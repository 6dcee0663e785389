import { fileURLToPath } from 'node:url';
import { EXIT, InputError, UsageError, type Command } from './args.ts';

/** Commands load lazily, so `token` or `push` do not pay for the server or the analysis code. */
const COMMANDS: Array<{ name: string; summary: string; load(): Promise<Command> }> = [
  { name: 'serve', summary: 'run the API, dashboard and (embedded mode) the worker', load: async () => (await import('./commands/serve.ts')).serveCommand },
  { name: 'push', summary: 'upload a run bundle to a Plumbline server (resumable)', load: async () => (await import('./commands/push.ts')).pushCommand },
  { name: 'analyze', summary: 'analyse a bundle locally and print the verdict (exit code by verdict)', load: async () => (await import('./commands/analyze.ts')).analyzeCommand },
  { name: 'simulate', summary: 'simulate a run bundle (with faults) for tests and demos', load: async () => (await import('./commands/simulate.ts')).simulateCommand },
  { name: 'token', summary: 'create, list or revoke API tokens in the local data directory', load: async () => (await import('./commands/token.ts')).tokenCommand },
];

function overview(): string {
  const rows = COMMANDS.map((c) => `  ${c.name.padEnd(10)} ${c.summary}`).join('\n');
  return `plumbline: triage of robot mapping runs

Usage: plumbline <command> [options]      plumbline <command> --help

Commands:
${rows}
  help       this text

Exit codes: 0 success (analyze: verdict sound), 1 doubtful, 2 unfit (analyze only),
  ${EXIT.usage} usage error, ${EXIT.input} invalid input (bad bundle, refused upload), ${EXIT.unavailable} server unreachable,
  ${EXIT.internal} internal error.
Configuration comes from PLUMBLINE_* environment variables (see README).
`;
}

/** Runs one command line; resolves to the exit code. */
export async function main(argv: string[]): Promise<number> {
  const [name, ...rest] = argv;
  if (!name || name === 'help' || name === '--help' || name === '-h') {
    const target = COMMANDS.find((c) => c.name === rest[0]);
    process.stdout.write(target ? (await target.load()).usage : overview());
    return EXIT.ok;
  }
  const entry = COMMANDS.find((c) => c.name === name);
  if (!entry) {
    process.stderr.write(`plumbline: unknown command "${name}"\n\n${overview()}`);
    return EXIT.usage;
  }
  const cmd = await entry.load();
  if (!cmd.forwardsHelp && (rest.includes('--help') || rest.includes('-h'))) {
    process.stdout.write(cmd.usage);
    return EXIT.ok;
  }
  try {
    return await cmd.run(rest);
  } catch (err) {
    if (err instanceof UsageError) {
      process.stderr.write(`plumbline ${cmd.name}: ${err.message}\n\n${cmd.usage}`);
      return EXIT.usage;
    }
    if (err instanceof InputError) {
      process.stderr.write(`plumbline ${cmd.name}: ${err.message}\n`);
      return EXIT.input;
    }
    if (err instanceof Error && err.name === 'ConfigError') {
      process.stderr.write(`plumbline: configuration error: ${err.message}\n`);
      return EXIT.usage;
    }
    if (err instanceof Error && err.name === 'BundleError') {
      process.stderr.write(`plumbline ${cmd.name}: invalid bundle: ${err.message}\n`);
      return EXIT.input;
    }
    process.stderr.write(`plumbline ${cmd.name}: ${(err as Error).stack ?? String(err)}\n`);
    return EXIT.internal;
  }
}

if (process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1]) {
  process.exitCode = await main(process.argv.slice(2));
}
