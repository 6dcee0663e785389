export * from './types.ts';
export * from './errors.ts';
