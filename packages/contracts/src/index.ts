export * from './vocabulary.ts';
export * from './manifest.ts';
export * from './report.ts';
export * from './api.ts';
export * from './policy.ts';
export * from './fleet.ts';
