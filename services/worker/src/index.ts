export { startWorker, startEmbeddedWorker, startRemoteWorker, type WorkerDeps, type RemoteWorkerDeps, type RunningWorker } from './worker.ts';
export { createLocalLedger, type LocalLedgerDeps } from './ledger/local-ledger.ts';
export { createRemoteLedger, RemoteApiError, type RemoteLedgerOptions } from './ledger/remote-ledger.ts';
export type { AnalysisLedger, BundleHandle, StartOutcome, Rejection, RecordResult } from './ledger/ledger.ts';
export { analyseWithTrajectory, toAnalysisOutput, type AnalysisOutput } from './analysis-output.ts';
export { createAnalyseRunProcessor, type Analyze, type AnalyseRunDeps } from './processors/analyse-run.ts';
export { startWebhookDispatcher, signatureHeader, SIGNATURE_HEADER, type WebhookDispatcher } from './webhooks/dispatcher.ts';
export { createPolicyResolver } from './policy.ts';
export { createThreadedAnalyze, ThreadedAnalysisError, type ThreadedAnalyze } from './threaded-analyze.ts';
