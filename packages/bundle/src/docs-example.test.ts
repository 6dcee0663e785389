import { readFile } from 'node:fs/promises';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { readImuCsv } from './csv-tables.ts';
import { parseManifest } from './manifest.ts';
import { readGnssNmea } from './nmea-reader.ts';
import { enc } from './test-fixtures.ts';

const DOC = fileURLToPath(new URL('../../../docs/bundle-format.md', import.meta.url));

/** The fenced code blocks of the format document, in order. */
async function codeBlocks(): Promise<string[]> {
  const text = await readFile(DOC, 'utf8');
  return [...text.matchAll(/```[a-z]*\n([\s\S]*?)```/g)].map((m) => m[1]!);
}

describe('examples in docs/bundle-format.md are valid input', () => {
  it('the example run.json passes the manifest schema', async () => {
    const json = (await codeBlocks()).find((b) => b.includes('"format": "plumbline-run/1"'))!;
    const m = parseManifest(enc(json));
    expect(m).toMatchObject({ robot_id: 'kestrel-01', site: 'harbourside-depot' });
  });
  it('the example imu.csv reads as two samples', async () => {
    const csv = (await codeBlocks()).find((b) => b.includes('t,gx,gy,gz,ax,ay,az'))!;
    const { columns } = await readImuCsv([enc(csv)], { file: 'imu.csv' });
    expect(columns.n).toBe(2);
    expect(columns.az[0]).toBe(9.8071);
  });
  it('the example NMEA sentences have valid checksums and decode to the harbourside-depot origin', async () => {
    const nmea = (await codeBlocks()).find((b) => b.startsWith('$GNGGA'))!;
    const { columns, stats } = await readGnssNmea([enc(nmea)], { file: 'gnss.nmea' });
    expect(stats.badLines).toBe(0);
    // origin of the fictional site: 47.3821° N, 8.5412° E, 412.0 m ellipsoidal (362.5 m MSL + 49.5 m separation)
    expect(columns.lat[0]).toBeCloseTo(47.3821, 9);
    expect(columns.lon[0]).toBeCloseTo(8.5412, 9);
    expect(columns.alt[0]).toBeCloseTo(412.0, 9);
  });
});
