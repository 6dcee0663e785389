import { createHash, randomBytes } from 'node:crypto';
import { existsSync, mkdtempSync, readdirSync, readFileSync, rmSync, statSync, utimesSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Readable } from 'node:stream';
import { open } from 'node:fs/promises';
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { createBlobStore } from './blob-store.ts';
import { BlobChecksumError, BlobOffsetError, BlobTooLargeError, NotFoundError } from './errors.ts';
import type { BlobStore } from './types.ts';

let dir: string;
let blobs: BlobStore;
beforeEach(() => {
  dir = mkdtempSync(join(tmpdir(), 'plumbline-blobs-'));
  blobs = createBlobStore(dir);
});
afterEach(() => rmSync(dir, { recursive: true, force: true }));

/** Every regular file under `root`, relative. */
function files(root: string): string[] {
  if (!existsSync(root)) return [];
  return readdirSync(root, { recursive: true, withFileTypes: true })
    .filter((e) => e.isFile())
    .map((e) => join(e.parentPath, e.name).slice(root.length + 1))
    .sort();
}

const bytes = (n: number, seed = 1) => Buffer.from(Array.from({ length: n }, (_, i) => (i * 31 + seed) & 0xff));
const sha256 = (b: Buffer) => createHash('sha256').update(b).digest('hex');

function chunked(data: Buffer, size: number, failAfter?: number): Readable {
  let sent = 0;
  return new Readable({
    read() {
      if (failAfter !== undefined && sent >= failAfter) {
        this.destroy(new Error('connection reset by peer'));
        return;
      }
      if (sent >= data.length) return void this.push(null);
      this.push(data.subarray(sent, sent + size));
      sent += size;
    },
  });
}

describe('blob store: writeStream', () => {
  it('stores content under sha256/<2 hex>/<62 hex> and reports the digest', async () => {
    // SHA-256("abc") = ba7816bf... (FIPS 180-2, Appendix B.1 example)
    const info = await blobs.writeStream(Readable.from([Buffer.from('abc')]), { maxBytes: 100 });
    expect(info.sha256).toBe('ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad');
    expect(info.path).toBe(join(dir, 'sha256', 'ba', '7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad'));
    expect(info.sizeBytes).toBe(3);
    expect(readFileSync(info.path, 'utf8')).toBe('abc');
    expect(await blobs.has(info.sha256)).toBe(true);
    expect(files(join(dir, 'tmp'))).toEqual([]);
  });

  it('streams a multi-chunk body and dedups identical content', async () => {
    const data = bytes(300_000);
    const a = await blobs.writeStream(chunked(data, 65_536), { maxBytes: 1_000_000 });
    const b = await blobs.writeStream(chunked(data, 1000), { maxBytes: 1_000_000 });
    expect(a).toEqual(b);
    expect(a.sha256).toBe(sha256(data));
    expect(files(join(dir, 'sha256'))).toHaveLength(1);
    const back: Buffer[] = [];
    for await (const c of blobs.open(a.sha256)) back.push(c as Buffer);
    expect(Buffer.concat(back).equals(data)).toBe(true);
  });

  it('leaves nothing behind when the source errors midway', async () => {
    const data = bytes(200_000);
    await expect(blobs.writeStream(chunked(data, 10_000, 50_000), { maxBytes: 1_000_000 })).rejects.toThrow(/connection reset/);
    expect(files(dir)).toEqual([]);
    expect(await blobs.has(sha256(data))).toBe(false);
  });

  it('aborts past maxBytes and deletes the temp file', async () => {
    await expect(blobs.writeStream(chunked(bytes(5000), 1000), { maxBytes: 4096 })).rejects.toBeInstanceOf(BlobTooLargeError);
    expect(files(dir)).toEqual([]);
  });

  it('fsyncs the file and its directory before reporting success', async () => {
    // FileHandle is not exported by node:fs/promises; take its prototype from an open handle
    const probe = await open(join(dir, 'probe'), 'w');
    const proto = Object.getPrototypeOf(probe) as { sync: () => Promise<void> };
    await probe.close();
    rmSync(join(dir, 'probe'));
    const spy = vi.spyOn(proto, 'sync');
    try {
      await blobs.writeStream(Readable.from([Buffer.from('durable')]), { maxBytes: 100 });
      expect(spy.mock.calls.length).toBeGreaterThanOrEqual(2); // the temp file, then the shard directory
    } finally {
      spy.mockRestore();
    }
  });

  it('accepts exactly maxBytes', async () => {
    const info = await blobs.writeStream(chunked(bytes(4096), 1000), { maxBytes: 4096 });
    expect(info.sizeBytes).toBe(4096);
  });

  it('keeps nothing when the expected digest differs', async () => {
    await expect(blobs.writeStream(Readable.from([Buffer.from('abd')]), { maxBytes: 10, expectedSha256: sha256(Buffer.from('abc')) })).rejects.toBeInstanceOf(
      BlobChecksumError,
    );
    expect(files(dir)).toEqual([]);
  });

  it('writes a body of many batches in odd-sized chunks byte for byte, flushing to disk along the way', async () => {
    // past the 1 MiB write batch and the 16 MiB background flush, with chunks that straddle batch boundaries
    const data = randomBytes(20 * 1024 * 1024 + 123);
    const probe = await open(join(dir, 'probe'), 'w');
    const proto = Object.getPrototypeOf(probe) as { datasync: () => Promise<void> };
    await probe.close();
    rmSync(join(dir, 'probe'));
    const spy = vi.spyOn(proto, 'datasync');
    try {
      const info = await blobs.writeStream(chunked(data, 65_537), { maxBytes: data.length });
      expect(info).toMatchObject({ sha256: sha256(data), sizeBytes: data.length });
      expect(readFileSync(info.path).equals(data)).toBe(true);
      expect(spy).toHaveBeenCalled();
    } finally {
      spy.mockRestore();
    }
  });

  it('keeps the stored copy of identical content and drops the new temp file', async () => {
    const data = bytes(50_000, 3);
    const a = await blobs.writeStream(chunked(data, 4096), { maxBytes: 100_000 });
    const inode = statSync(a.path).ino;
    const b = await blobs.writeStream(chunked(data, 7000), { maxBytes: 100_000 });
    expect(b).toEqual(a);
    expect(statSync(b.path).ino).toBe(inode);
    await vi.waitFor(() => expect(files(join(dir, 'tmp'))).toEqual([]));
  });

  it('refuses to open a missing blob and a malformed digest', () => {
    expect(() => blobs.open('0'.repeat(64))).toThrow(NotFoundError);
    expect(() => blobs.pathOf('../../etc/passwd')).toThrow(RangeError);
  });
});

describe('blob store: resumable sessions', () => {
  it('appends chunks at their offsets, refuses a wrong offset and promotes on the right digest', async () => {
    const data = bytes(10_000, 7);
    const temp = await blobs.createTemp('upload-1');
    expect(await blobs.appendChunk(temp, 0, data.subarray(0, 4000), { maxBytes: 10_000 })).toBe(4000);
    await expect(blobs.appendChunk(temp, 3000, data.subarray(3000, 5000), { maxBytes: 10_000 })).rejects.toMatchObject({
      constructor: BlobOffsetError,
      expectedOffset: 4000,
    });
    expect(await blobs.appendChunk(temp, 4000, chunked(data.subarray(4000), 1500), { maxBytes: 10_000 })).toBe(10_000);
    await expect(blobs.promote(temp, sha256(bytes(10_000, 8)))).rejects.toBeInstanceOf(BlobChecksumError);
    expect(existsSync(temp)).toBe(true); // a failed promote keeps the session's bytes
    const info = await blobs.promote(temp, sha256(data));
    expect(info).toMatchObject({ sha256: sha256(data), sizeBytes: 10_000 });
    expect(existsSync(temp)).toBe(false);
    expect(readFileSync(info.path).equals(data)).toBe(true);
  });

  it('cuts a chunk that fails or overflows back to the last good offset', async () => {
    const temp = await blobs.createTemp('upload-2');
    await blobs.appendChunk(temp, 0, bytes(1000), { maxBytes: 3000 });
    await expect(blobs.appendChunk(temp, 1000, chunked(bytes(5000), 500), { maxBytes: 3000 })).rejects.toBeInstanceOf(BlobTooLargeError);
    expect(statSync(temp).size).toBe(1000);
    await expect(blobs.appendChunk(temp, 1000, chunked(bytes(5000), 500, 1500), { maxBytes: 10_000 })).rejects.toThrow(/connection reset/);
    expect(statSync(temp).size).toBe(1000);
  });

  it('cuts a chunk of several MiB that fails midway back to the last good offset, with no write landing later', async () => {
    const temp = await blobs.createTemp('upload-4');
    const head = randomBytes(1000);
    await blobs.appendChunk(temp, 0, head, { maxBytes: 8 << 20 });
    await expect(blobs.appendChunk(temp, 1000, chunked(randomBytes(6 << 20), 65_536, 5 << 20), { maxBytes: 8 << 20 })).rejects.toThrow(/connection reset/);
    expect(readFileSync(temp).equals(head)).toBe(true);
    await new Promise((r) => setTimeout(r, 20));
    expect(statSync(temp).size).toBe(1000);
  });

  it('serialises racing writes to one session: the second fails on the offset instead of interleaving', async () => {
    const temp = await blobs.createTemp('upload-3');
    const a = bytes(200_000, 1);
    const b = bytes(200_000, 2);
    const results = await Promise.allSettled([
      blobs.appendChunk(temp, 0, chunked(a, 8192), { maxBytes: 400_000 }),
      blobs.appendChunk(temp, 0, chunked(b, 8192), { maxBytes: 400_000 }),
    ]);
    expect(results[0]).toEqual({ status: 'fulfilled', value: 200_000 });
    expect(results[1]).toMatchObject({ status: 'rejected', reason: { code: 'BLOB_OFFSET_MISMATCH', expectedOffset: 200_000 } });
    expect(readFileSync(temp).equals(a)).toBe(true);
  });

  it('sweeps stale temp files only', async () => {
    const old = await blobs.createTemp('old');
    const fresh = await blobs.createTemp('fresh');
    const hourAgo = new Date(Date.now() - 3_600_000);
    utimesSync(old, hourAgo, hourAgo);
    expect(await blobs.sweep(600_000)).toBe(1);
    expect(existsSync(old)).toBe(false);
    expect(existsSync(fresh)).toBe(true);
    await blobs.removeTemp(fresh);
    await blobs.removeTemp(fresh); // idempotent
    expect(files(join(dir, 'tmp'))).toEqual([]);
  });
});
