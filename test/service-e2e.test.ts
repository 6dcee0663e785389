import { describe, it } from 'vitest';
import { runServiceFlow } from './service-flow.ts';

// Embedded mode: SQLite queue, worker (analysis in a worker thread) and webhook dispatcher in the API process.
describe('service end to end, embedded mode', () => {
  it('push -> analysed -> query -> review -> signed webhooks', async () => {
    await runServiceFlow({ label: 'embedded', threaded: true });
  }, 120_000);
});
