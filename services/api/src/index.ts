export { buildApp, type AppDeps, type Clock, type InspectBundle, type TrajectoryCsv } from './app.ts';
export { createLogger } from './logger.ts';
export { requestAnalysis } from './ingest.ts';
export { createServiceMetrics, type ServiceMetrics } from './metrics.ts';
export { openResources, startServer, DEFAULT_DASHBOARD_DIR, type ApiResources } from './server.ts';
