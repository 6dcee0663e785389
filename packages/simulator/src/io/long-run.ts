/**
 * Streaming writer for long runs (e.g. an 8-hour shift at 200 Hz ≈ 5.8 M IMU lines): sensors are generated in
 * chunks of a few seconds and written straight to (gzip) streams, so memory stays bounded whatever the duration.
 * Produces the same layout as writeRun: <outDir>/bundle/... (or bundle.tar.gz) and <outDir>/truth.json.
 */
import { mkdir, rm, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { createScenario } from '../scenario.ts';
import { createGnssBlock, createGnssGenerator } from '../sensors/gnss.ts';
import { createImuBlock, createImuGenerator } from '../sensors/imu.ts';
import { generateLoops } from '../sensors/loops.ts';
import { createOdometryBlock, createOdometryGenerator } from '../sensors/odometry.ts';
import { defaultFiles, gapCounts } from '../simulate.ts';
import type { RunSpec } from '../spec.ts';
import { buildManifest, buildTruth, GEOID_SEPARATION_M } from '../truth.ts';
import { GNSS_HEADER, IMU_HEADER, LOOPS_HEADER, ODOMETRY_HEADER, timeDecimals, writeGnssRows, writeImuRows, writeLoopRows, writeOdometryRows } from './format.ts';
import { writeNmeaRows } from './nmea.ts';
import { openSink } from './sink.ts';
import type { TextSink } from './sink.ts';
import { accelDecimals, jsonText, packDirectory } from './write.ts';
import type { WriteOptions, WrittenRun } from './write.ts';

const CHUNK = 4096;

async function stream<B extends { n: number }>(
  sink: TextSink,
  gen: { count: number; fill(k0: number, n: number, out: B): number },
  block: B,
  write: (sink: TextSink, b: B) => Promise<void>,
): Promise<void> {
  for (let k = 0; k < gen.count; k += CHUNK) {
    gen.fill(k, CHUNK, block);
    await write(sink, block);
  }
}

/** Writes a run of any length by streaming; gzip level defaults to 1 here (speed over size). */
export async function writeLongRun(spec: RunSpec, outDir: string, options: WriteOptions = {}): Promise<WrittenRun> {
  const gzip = options.gzip ?? true;
  const level = options.level ?? 1;
  const nmea = options.nmea ?? spec.gnssFormat === 'nmea';
  const sp: RunSpec = { ...spec, gnssFormat: nmea ? 'nmea' : 'csv' };
  const s = createScenario(sp);
  const files = defaultFiles(s, gzip);
  const dir = join(outDir, 'bundle');
  await rm(dir, { recursive: true, force: true });
  await mkdir(dir, { recursive: true });
  await writeFile(join(dir, 'run.json'), jsonText(buildManifest(s, files)));

  let sink = openSink(join(dir, files.imu), gzip, level);
  await sink.write(IMU_HEADER);
  const tDec = timeDecimals(sp.imuRateHz);
  const aDec = accelDecimals({ spec: sp });
  await stream(sink, createImuGenerator(s), createImuBlock(CHUNK), (k, b) => writeImuRows(k, b, tDec, aDec));
  await sink.close();

  sink = openSink(join(dir, files.odometry), gzip, level);
  await sink.write(ODOMETRY_HEADER);
  await stream(sink, createOdometryGenerator(s), createOdometryBlock(CHUNK), writeOdometryRows);
  await sink.close();

  let multipath: ReturnType<typeof createGnssGenerator>['multipath'] = [];
  if (files.gnss) {
    const gg = createGnssGenerator(s);
    multipath = gg.multipath;
    sink = openSink(join(dir, files.gnss), gzip && !nmea, level);
    if (!nmea) await sink.write(GNSS_HEADER);
    await stream(sink, gg, createGnssBlock(CHUNK), (k, b) => (nmea ? writeNmeaRows(k, b, GEOID_SEPARATION_M) : writeGnssRows(k, b)));
    await sink.close();
  }
  const lp = sp.loops ? generateLoops(s) : null;
  if (lp && files.loops) {
    sink = openSink(join(dir, files.loops), gzip, level);
    await sink.write(LOOPS_HEADER);
    await writeLoopRows(sink, lp.loops);
    await sink.close();
  }
  const truth = buildTruth(s, { multipath, falseLoops: lp?.falseLoops ?? [], loopCount: lp?.loops.n ?? 0, imuSamplesRemoved: gapCounts(sp) });
  const truthPath = join(outDir, 'truth.json');
  await writeFile(truthPath, jsonText(truth));
  if (options.archive === 'tar.gz') {
    const archive = join(outDir, 'bundle.tar.gz');
    await packDirectory(dir, archive, s.t0Epoch);
    await rm(dir, { recursive: true, force: true });
    return { bundlePath: archive, truthPath };
  }
  return { bundlePath: dir, truthPath };
}
