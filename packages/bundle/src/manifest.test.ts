import { symlink, unlink } from 'node:fs/promises';
import { join } from 'node:path';
import fc from 'fast-check';
import { afterAll, describe, expect, it } from 'vitest';
import { BundleError } from './errors.ts';
import { locateJsonPath, locateJsonSyntaxError } from './json-locate.ts';
import { parseManifest, readManifest } from './manifest.ts';
import { bundleFiles, enc, manifest, removeTempDirs, tempDir, writeFiles } from './test-fixtures.ts';

afterAll(removeTempDirs);

function manifestError(text: string): BundleError {
  try {
    parseManifest(enc(text));
  } catch (err) {
    expect(err).toBeInstanceOf(BundleError);
    return err as BundleError;
  }
  throw new Error('expected a BundleError');
}

describe('parseManifest', () => {
  it('accepts the example manifest and applies defaults', () => {
    const m = parseManifest(enc(JSON.stringify(manifest({ software: undefined }))));
    expect(m.robot_id).toBe('kestrel-01');
    expect(m.software).toEqual({});
    expect(m.gnss?.antenna_in_imu).toEqual([0, 0, 0.3]);
  });
  it('JSON syntax error names line and column', () => {
    const text = '{\n  "format": "plumbline-run/1",\n  "robot_id": "kestrel-01"\n  "run_id": "x"\n}';
    const e = manifestError(text);
    // the missing comma is detected at the next property name: line 4, column 3
    expect(e).toMatchObject({ code: 'MANIFEST_SYNTAX', file: 'run.json', line: 4, column: 3 });
    expect(e.message).toContain('expected "," or "}"');
    expect(manifestError('{"a": [1, 2,]}')).toMatchObject({ line: 1, column: 13 });
    expect(manifestError('')).toMatchObject({ code: 'MANIFEST_SYNTAX', line: 1, column: 1 });
  });
  it('schema violation names the JSON path and where the value sits', () => {
    const text = JSON.stringify(manifest({ imu: { file: 'imu.csv', rate_hz: -200 } }), null, 2);
    const e = manifestError(text);
    expect(e.code).toBe('MANIFEST_INVALID');
    expect(e.paths).toEqual(['imu.rate_hz']);
    const lines = text.split('\n');
    const line = lines.findIndex((l) => l.includes('"rate_hz"')) + 1;
    expect(e).toMatchObject({ line, column: lines[line - 1]!.indexOf('-200') + 1 });
  });
  it('missing property is located at the object that lacks it; every issue is listed', () => {
    const m = manifest();
    delete m.robot_id;
    const e = manifestError(JSON.stringify({ ...m, site: 'no spaces allowed' }));
    expect([...e.paths].sort()).toEqual(['robot_id', 'site']);
    expect(e.issues).toHaveLength(2);
    expect(e.issues.find((i) => i.message.startsWith('robot_id'))).toMatchObject({ line: 1, column: 1 });
  });
  it('data files must have the expected extensions', () => {
    const e = manifestError(JSON.stringify(manifest({ gnss: { file: 'gnss.ubx' } })));
    expect(e).toMatchObject({ code: 'MANIFEST_INVALID', paths: ['gnss.file'] });
  });
  it('non-UTF-8 bytes are NOT_UTF8 with the line', () => {
    const bytes = Buffer.concat([Buffer.from('{\n"site": "'), Buffer.from([0xc3, 0x28]), Buffer.from('"}')]);
    expect(() => parseManifest(bytes)).toThrow(expect.objectContaining({ code: 'NOT_UTF8', line: 2, column: 10 }));
  });
});

describe('readManifest', () => {
  it('checks that every named file exists and is a regular file', async () => {
    const dir = await tempDir();
    const files = bundleFiles();
    delete files['loops.csv'];
    await writeFiles(dir, files);
    await expect(readManifest(dir)).rejects.toMatchObject({ code: 'FILE_MISSING', file: 'loops.csv' });
    await symlink(join(dir, 'imu.csv'), join(dir, 'loops.csv'));
    await expect(readManifest(dir)).rejects.toMatchObject({ code: 'FILE_MISSING', file: 'loops.csv' });
    await unlink(join(dir, 'loops.csv'));
    await writeFiles(dir, { 'loops.csv': bundleFiles()['loops.csv']! });
    expect((await readManifest(dir)).site).toBe('harbourside-depot');
  });
  it('a bundle without run.json is FILE_MISSING run.json', async () => {
    await expect(readManifest(await tempDir())).rejects.toMatchObject({ code: 'FILE_MISSING', file: 'run.json' });
  });
});

describe('JSON locating (RFC 8259 grammar)', () => {
  it('agrees with JSON.parse on validity for generated and mutated documents (property)', () => {
    // common practice: differential test against the engine's JSON parser
    fc.assert(
      fc.property(fc.json(), fc.nat(), fc.constantFrom('', ',', '}', ']', '"', ':', 'x', '\n'), (doc, at, insert) => {
        const mutated = doc.slice(0, at % (doc.length + 1)) + insert + doc.slice(at % (doc.length + 1));
        for (const text of [doc, mutated]) {
          let ok = true;
          try {
            JSON.parse(text);
          } catch {
            ok = false;
          }
          expect(locateJsonSyntaxError(text) === null, text).toBe(ok);
        }
      }),
      { numRuns: 300 },
    );
  });
  it('locates a value by path', () => {
    const text = '{\n  "a": {\n    "b": [10, 20]\n  }\n}';
    expect(locateJsonPath(text, ['a', 'b', 1])).toMatchObject({ line: 3, column: 15 });
    expect(locateJsonPath(text, ['a', 'zz'])).toMatchObject({ line: 2, column: 8 });
  });
});
