export * from './columns.ts';
export * from './errors.ts';
export * from './byte-source.ts';
export * from './csv-reader.ts';
export * from './csv-tables.ts';
