export * from './columns.ts';
export * from './errors.ts';
export * from './byte-source.ts';
export * from './csv-reader.ts';
export * from './csv-tables.ts';
export * from './nmea-reader.ts';
export * from './archive.ts';
export { safeEntryName, type ArchiveLimits } from './archive-extractor.ts';
