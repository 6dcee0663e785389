// Worker-thread bootstrap: threads do not inherit the TypeScript loader, so register it here, then load the entry.
import { workerData } from 'node:worker_threads';
import { register } from 'tsx/esm/api';

register();
await import(workerData.entry);
