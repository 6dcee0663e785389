/**
 * Command line: simulate one run and write it as a bundle with truth.json beside it.
 *   node --import tsx packages/simulator/src/cli/simulate.ts --out /tmp/run --seed 3 --duration 180 \
 *     --fault time-offset:0.03 --fault imu-gap@40-42
 */
import { parseArgs } from 'node:util';
import { parseFault } from '../fault-parse.ts';
import { writeLongRun } from '../io/long-run.ts';
import { writeRun } from '../io/write.ts';
import { MAX_IN_MEMORY_S, simulateRun } from '../simulate.ts';
import { makeRunSpec, SITES } from '../spec.ts';
import type { RunSpec, SiteId } from '../spec.ts';

const HELP = `Usage: simulate --out <dir> [options]

Writes <dir>/bundle/ (run.json, imu.csv.gz, odometry.csv.gz, gnss.csv.gz|gnss.nmea, loops.csv.gz) and <dir>/truth.json.

  --out <dir>            output directory (required)
  --seed <n>             PRNG seed (default 1)
  --duration <s>         run length in seconds (default 120; longer than ${MAX_IN_MEMORY_S} s streams)
  --motion <m>           ground | handheld (default ground)
  --site <id>            ${Object.keys(SITES).join(' | ')} (default harbourside-depot)
  --robot <id>           robot id (default kestrel-01)
  --run <id>             run id (default run-0001)
  --started-at <iso>     ISO 8601 start time (default 2026-03-02T08:00:00Z)
  --imu-rate <hz>        IMU rate (default 200)
  --odom-rate <hz>       odometry rate (default 20)
  --gnss-rate <hz>       GNSS rate, 0 for none (default 5)
  --source <s>           visual | visual-inertial | lidar | wheel (default visual-inertial)
  --monocular            monocular odometry (set --scale too)
  --scale <x>            true scale: odometry distance × scale = metres (default 1)
  --noise none           turn off every random error
  --nmea                 write GNSS as NMEA 0183 GGA+RMC
  --no-gzip              plain .csv files
  --no-loops             no loops.csv
  --archive              pack the bundle into bundle.tar.gz
  --fault <spec>         repeatable; kind[/variant][:magnitude][@t0[-t1]], times in s since start:
                           time-offset:0.03            constant offset 30 ms (odometry − IMU)
                           time-offset/skew:200@60     clock skew 200 ppm from t = 60 s
                           extrinsic-rotation:3        declared extrinsic 3° off
                           gravity-tilt:2              odometry world tilted 2°
                           scale-drift:4@30            scale +4 % per 100 m from 30 s
                           scale-drift/step:8@90       scale step +8 % at 90 s
                           imu-gap@40-42   odometry-gap@50-53   pose-jump:0.5@70
                           imu-saturation/accel@60-60.4  imu-saturation/gyro:12@61-61.4
                           units/gyro-deg   units/accel-g   loop-mismatch:8@30
                           gnss-divergence:3@170-200
  --help                 this text
`;

async function main(argv: string[]): Promise<number> {
  const { values } = parseArgs({
    args: argv,
    options: {
      out: { type: 'string' }, seed: { type: 'string' }, duration: { type: 'string' }, motion: { type: 'string' },
      site: { type: 'string' }, robot: { type: 'string' }, run: { type: 'string' }, 'started-at': { type: 'string' },
      'imu-rate': { type: 'string' }, 'odom-rate': { type: 'string' }, 'gnss-rate': { type: 'string' },
      source: { type: 'string' }, monocular: { type: 'boolean' }, scale: { type: 'string' }, noise: { type: 'string' },
      nmea: { type: 'boolean' }, 'no-gzip': { type: 'boolean' }, 'no-loops': { type: 'boolean' }, archive: { type: 'boolean' },
      fault: { type: 'string', multiple: true }, help: { type: 'boolean' },
    },
    strict: true,
  });
  if (values.help) {
    process.stdout.write(HELP);
    return 0;
  }
  if (!values.out) throw new Error('--out <dir> is required (see --help)');
  const num = (name: string, v: string | undefined, d: number) => {
    if (v === undefined) return d;
    const x = Number(v);
    if (!Number.isFinite(x)) throw new Error(`--${name}: "${v}" is not a number`);
    return x;
  };
  if (values.site && !(values.site in SITES)) throw new Error(`--site: unknown site "${values.site}"`);
  const partial: Partial<RunSpec> = {
    seed: num('seed', values.seed, 1),
    durationS: num('duration', values.duration, 120),
    motion: values.motion === 'handheld' ? 'handheld' : 'ground',
    imuRateHz: num('imu-rate', values['imu-rate'], 200),
    odometryRateHz: num('odom-rate', values['odom-rate'], 20),
    gnssRateHz: num('gnss-rate', values['gnss-rate'], 5),
    gnssFormat: values.nmea ? 'nmea' : 'csv',
    loops: !values['no-loops'],
    monocular: values.monocular ?? false,
    scale: num('scale', values.scale, 1),
    noise: values.noise === 'none' ? 'none' : 'realistic',
    faults: (values.fault ?? []).map(parseFault),
  };
  if (values.site) partial.site = values.site as SiteId;
  if (values.robot) partial.robotId = values.robot;
  if (values.run) partial.runId = values.run;
  if (values['started-at']) partial.startedAt = values['started-at'];
  if (values.source) partial.odometrySource = values.source as RunSpec['odometrySource'];
  const spec = makeRunSpec(partial);
  const opts = { gzip: !values['no-gzip'], nmea: values.nmea ?? false, ...(values.archive ? { archive: 'tar.gz' as const } : {}) };
  const written = spec.durationS > MAX_IN_MEMORY_S ? await writeLongRun(spec, values.out, opts) : await writeRun(simulateRun(spec), values.out, opts);
  process.stdout.write(`bundle ${written.bundlePath}\ntruth  ${written.truthPath}\n`);
  return 0;
}

main(process.argv.slice(2)).then(
  (code) => process.exit(code),
  (err: unknown) => {
    process.stderr.write(`simulate: ${err instanceof Error ? err.message : String(err)}\n`);
    process.exit(2);
  },
);
