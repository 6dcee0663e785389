import { parseArgs, type ParseArgsConfig } from 'node:util';

/** A command: its usage text (shown by `--help`) and its run function (resolves to the exit code). */
export interface Command {
  name: string;
  summary: string;
  usage: string;
  /** The command passes --help on to another program (simulate). */
  forwardsHelp?: boolean;
  run(argv: string[]): Promise<number>;
}

/** Exit codes shared by every command (documented in `plumbline help`). */
export const EXIT = { ok: 0, usage: 64, input: 65, unavailable: 69, internal: 70 } as const;

export class UsageError extends Error {
  override readonly name = 'UsageError';
}

/** A file given on the command line is unreadable or invalid (exit code `EXIT.input`). */
export class InputError extends Error {
  override readonly name = 'InputError';
}

/** node:util parseArgs with strict options; unknown flags become a UsageError naming the flag. */
export function parseFlags<O extends NonNullable<ParseArgsConfig['options']>>(argv: string[], options: O, allowPositionals = true) {
  try {
    return parseArgs({ args: argv, options: { ...options, help: { type: 'boolean', short: 'h' } }, allowPositionals, strict: true });
  } catch (err) {
    throw new UsageError((err as Error).message);
  }
}

export function wantsHelp(argv: string[]): boolean {
  return argv.includes('--help') || argv.includes('-h');
}
