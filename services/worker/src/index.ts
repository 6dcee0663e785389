export { startWorker, startEmbeddedWorker, type WorkerDeps, type RunningWorker } from './worker.ts';
export { createAnalyseRunProcessor, type Analyze, type AnalyseRunDeps } from './processors/analyse-run.ts';
export { startWebhookDispatcher, signatureHeader, SIGNATURE_HEADER, type WebhookDispatcher } from './webhooks/dispatcher.ts';
export { createPolicyResolver } from './policy.ts';
export { createThreadedAnalyze, ThreadedAnalysisError, type ThreadedAnalyze } from './threaded-analyze.ts';
