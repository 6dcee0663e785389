/** A text sink to a file, optionally gzip-compressed, honouring back-pressure so memory stays bounded. */
import { createWriteStream } from 'node:fs';
import { once } from 'node:events';
import { createGzip } from 'node:zlib';
import type { Writable } from 'node:stream';

export interface TextSink {
  write(text: string): Promise<void>;
  close(): Promise<void>;
}

/** Opens `path` for writing; gzip level 9 by default (small seed runs), lower levels for long runs. */
export function openSink(path: string, gzip: boolean, level = 9): TextSink {
  const file = createWriteStream(path);
  const head: Writable = gzip ? createGzip({ level }) : file;
  if (gzip) (head as ReturnType<typeof createGzip>).pipe(file);
  let failed: Error | null = null;
  head.on('error', (e) => (failed = e));
  file.on('error', (e) => (failed = e));
  return {
    async write(text) {
      if (failed) throw failed;
      if (!head.write(text)) await once(head, 'drain');
    },
    async close() {
      if (failed) throw failed;
      const done = once(file, 'close');
      head.end();
      await done;
    },
  };
}
