import { spawn } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import type { Command } from '../args.ts';

const SIMULATOR = fileURLToPath(new URL('../../../../packages/simulator/src/cli/simulate.ts', import.meta.url));

/** Runs the simulator's own command line in a child process with the same arguments. */
export function runNodeScript(script: string, args: string[]): Promise<number> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, ['--import', 'tsx', script, ...args], { stdio: 'inherit' });
    child.on('error', reject);
    child.on('exit', (code, signal) => resolve(code ?? (signal ? 128 : 1)));
  });
}

export const simulateCommand: Command = {
  name: 'simulate',
  summary: 'simulate a run bundle (with faults) for tests and demos',
  forwardsHelp: true,
  usage: `Usage: plumbline simulate --out <dir> [simulator options]

Forwards every option to the simulator, whose --help lists them (seed, duration, site,
robot, faults such as --fault time-offset:0.03 or --fault imu-gap@40-42).
`,
  async run(argv) {
    return runNodeScript(SIMULATOR, argv);
  },
};
