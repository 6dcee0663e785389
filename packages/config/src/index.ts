export { loadConfig, configReference, ConfigError, CONFIG_VARIABLES } from './config.ts';
export type { Config } from './config.ts';
export { loadPolicy } from './policy-file.ts';
