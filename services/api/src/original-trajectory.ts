import { join } from 'node:path';
import { Readable } from 'node:stream';
import { openBundle, readManifest, readOdometryCsv, type OdometryColumns } from '@plumbline/bundle';

/** Rows per emitted chunk: large enough to keep the stream cheap, small enough to keep memory flat. */
const ROWS_PER_CHUNK = 2048;

/** CSV text of the odometry in chunks, in the trajectory format (`t,x,y,z,qw,qx,qy,qz`; µs, 0.1 mm, 1e-9). */
function* odometryCsvChunks(c: OdometryColumns): Generator<string> {
  yield 't,x,y,z,qw,qx,qy,qz\n';
  for (let start = 0; start < c.n; start += ROWS_PER_CHUNK) {
    let out = '';
    const end = Math.min(c.n, start + ROWS_PER_CHUNK);
    for (let i = start; i < end; i++) {
      out +=
        `${c.t[i]!.toFixed(6)},${c.x[i]!.toFixed(4)},${c.y[i]!.toFixed(4)},${c.z[i]!.toFixed(4)},` +
        `${c.qw[i]!.toFixed(9)},${c.qx[i]!.toFixed(9)},${c.qy[i]!.toFixed(9)},${c.qz[i]!.toFixed(9)}\n`;
    }
    yield out;
  }
}

/**
 * The recorded odometry of a stored bundle as a CSV stream (the quality column dropped), read through packages/bundle:
 * only the odometry file is parsed (not the IMU, GNSS or loops), and the rows are formatted chunk by chunk as the
 * client reads them. Same bytes as `originalTrajectoryCsv` of the analysis package.
 */
export async function originalTrajectoryStream(archivePath: string): Promise<Readable> {
  const opened = await openBundle(archivePath);
  try {
    const manifest = await readManifest(opened.root);
    const file = manifest.odometry.file;
    const { columns } = await readOdometryCsv(join(opened.root, file), { file });
    return Readable.from(odometryCsvChunks(columns), { objectMode: false });
  } finally {
    await opened.cleanup();
  }
}
