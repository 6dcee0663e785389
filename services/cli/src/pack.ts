import { createHash } from 'node:crypto';
import { createReadStream, createWriteStream } from 'node:fs';
import { mkdtemp, readdir, rm, stat } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join, relative } from 'node:path';
import { Transform } from 'node:stream';
import { pipeline } from 'node:stream/promises';
import { createGzip } from 'node:zlib';
import { pack } from 'tar-stream';

/** Regular files under `root`, relative paths with `/`, sorted so the archive is the same for the same files. */
async function listFiles(root: string): Promise<string[]> {
  const out: string[] = [];
  async function walk(dir: string): Promise<void> {
    for (const d of (await readdir(dir, { withFileTypes: true })).sort((a, b) => (a.name < b.name ? -1 : 1))) {
      const full = join(dir, d.name);
      if (d.isDirectory()) await walk(full);
      else if (d.isFile()) out.push(relative(root, full).split('\\').join('/'));
    }
  }
  await walk(root);
  return out;
}

export interface PackedBundle {
  path: string;
  sizeBytes: number;
  sha256: string;
  cleanup(): Promise<void>;
}

/**
 * Packs a bundle directory into a temporary .tar.gz, streaming file by file (no file is held in memory), and hashes
 * the archive as it is written. File times are fixed so the same files always give the same digest, which keeps
 * re-uploads idempotent.
 */
export async function packDirectory(dir: string): Promise<PackedBundle> {
  const files = await listFiles(dir);
  const tmp = await mkdtemp(join(tmpdir(), 'plumbline-push-'));
  const path = join(tmp, 'bundle.tar.gz');
  const hash = createHash('sha256');
  let sizeBytes = 0;
  const tap = new Transform({
    transform(chunk: Buffer, _enc, cb) {
      hash.update(chunk);
      sizeBytes += chunk.length;
      cb(null, chunk);
    },
  });
  const tar = pack();
  const writing = pipeline(tar, createGzip({ level: 6 }), tap, createWriteStream(path));
  const mtime = new Date('2000-01-01T00:00:00Z');
  for (const name of files) {
    const full = join(dir, name);
    const { size } = await stat(full);
    const entry = tar.entry({ name, size, mtime, mode: 0o644 });
    await pipeline(createReadStream(full), entry);
  }
  tar.finalize();
  await writing;
  return { path, sizeBytes, sha256: hash.digest('hex'), cleanup: () => rm(tmp, { recursive: true, force: true }) };
}

/** SHA-256 and size of a file, streamed. */
export async function hashFile(path: string): Promise<{ sha256: string; sizeBytes: number }> {
  const hash = createHash('sha256');
  let sizeBytes = 0;
  for await (const chunk of createReadStream(path, { highWaterMark: 1 << 20 })) {
    hash.update(chunk as Buffer);
    sizeBytes += (chunk as Buffer).length;
  }
  return { sha256: hash.digest('hex'), sizeBytes };
}
