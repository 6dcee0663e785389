import { resolve } from 'node:path';
import { z } from 'zod';

/** One entry per environment variable: the name, what it sets, and its zod schema (defaults included). */
const boolFlag = z
  .enum(['1', '0', 'true', 'false', 'yes', 'no', 'on', 'off'])
  .transform((s) => s === '1' || s === 'true' || s === 'yes' || s === 'on');

const positiveInt = z.coerce.number().int().positive();

const LOG_LEVELS = ['fatal', 'error', 'warn', 'info', 'debug', 'trace', 'silent'] as const;

/**
 * Every variable Plumbline reads. `describe` doubles as the "what was expected" text of the error message
 * and as the README table entry (see `configReference()`).
 */
export const CONFIG_VARIABLES = {
  PLUMBLINE_HOST: z.string().min(1).default('127.0.0.1').describe('address the API listens on'),
  PLUMBLINE_PORT: z.coerce.number().int().min(0).max(65535).default(8640).describe('TCP port of the API (0 = any free port)'),
  PLUMBLINE_DATA_DIR: z.string().min(1).default('./.data').describe('directory holding the SQLite file and the bundle blobs'),
  REDIS_URL: z
    .string()
    .regex(/^rediss?:\/\//, 'a redis:// or rediss:// URL')
    .optional()
    .describe('Redis for the job queue; unset = embedded mode (queue in SQLite, worker in the API process)'),
  PLUMBLINE_WORKER_CONCURRENCY: positiveInt.max(64).default(1).describe('analysis jobs run at the same time per worker process'),
  PLUMBLINE_ANALYSIS_TWO_THREADS: boolFlag
    .default(true)
    .describe('each analysis uses a second thread for GNSS, loops and pose graph beside the inertial estimators: a run is analysed sooner (1/0; 0 when the concurrency already keeps every core busy)'),
  PLUMBLINE_LOG_LEVEL: z.enum(LOG_LEVELS).default('info').describe(`log level: ${LOG_LEVELS.join(', ')}`),
  PLUMBLINE_MAX_UPLOAD_BYTES: positiveInt.default(2 * 1024 ** 3).describe('largest accepted bundle in bytes (default 2 GiB)'),
  PLUMBLINE_UPLOAD_RATE_PER_MIN: positiveInt.default(30).describe('uploads (runs, upload sessions) allowed per token per minute'),
  PLUMBLINE_AUTH_FAILURE_RATE_PER_MIN: positiveInt.default(20).describe('failed authentications allowed per client address per minute'),
  PLUMBLINE_POLICY_FILE: z.string().min(1).optional().describe('triage policy JSON file (name, version, thresholds, overrides); unset = built-in policy'),
  PLUMBLINE_DEMO: boolFlag.default(false).describe('demo mode: create tokens and load seed-runs/ at start (1/0, true/false)'),
  PLUMBLINE_PUBLIC_URL: z.url().optional().describe('base URL clients use to reach the API, e.g. https://plumbline.example.net'),
  PLUMBLINE_TOKEN: z
    .string()
    .min(8)
    .optional()
    .describe('API token used by `plumbline push` when --token is not given, and (admin role) by a remote worker (never logged)'),
  PLUMBLINE_API_URL: z
    .url()
    .regex(/^https?:\/\//, 'an http:// or https:// URL')
    .optional()
    .describe('base URL of the API for a remote worker (`npm run worker` on another host): no database; results go over HTTP with PLUMBLINE_TOKEN'),
  PLUMBLINE_CORS_ORIGINS: z
    .string()
    .default('')
    .describe('comma-separated origins allowed for cross-origin requests; empty = CORS closed'),
} as const;

type Vars = typeof CONFIG_VARIABLES;
type Parsed = { [K in keyof Vars]: z.output<Vars[K]> };

export interface Config {
  readonly host: string;
  readonly port: number;
  /** Absolute path. */
  readonly dataDir: string;
  readonly dbPath: string;
  readonly blobDir: string;
  readonly redisUrl: string | null;
  readonly mode: 'embedded' | 'redis';
  readonly workerConcurrency: number;
  readonly analysisTwoThreads: boolean;
  readonly logLevel: (typeof LOG_LEVELS)[number];
  readonly maxUploadBytes: number;
  readonly uploadRatePerMin: number;
  readonly authFailureRatePerMin: number;
  readonly policyFile: string | null;
  readonly demo: boolean;
  readonly publicUrl: string | null;
  readonly corsOrigins: readonly string[];
  /** Client-side: the token `plumbline push` sends; a remote worker's admin token. */
  readonly token: string | null;
  /** Remote worker: the API base URL (results over HTTP, no database); null = the worker opens the database. */
  readonly apiUrl: string | null;
}

/** Start-up configuration error; the message names the variable, the value seen and what was expected. */
export class ConfigError extends Error {
  override readonly name = 'ConfigError';
  constructor(
    readonly variable: string,
    message: string,
  ) {
    super(message);
  }
}

/**
 * Parse the environment once into a frozen `Config`. `env` defaults to `process.env`; tests pass their own.
 * Empty strings count as unset. Throws `ConfigError` at the first bad variable.
 */
export function loadConfig(env: Readonly<Record<string, string | undefined>> = process.env): Config {
  const out: Record<string, unknown> = {};
  for (const [name, schema] of Object.entries(CONFIG_VARIABLES)) {
    const raw = env[name];
    const value = raw === undefined || raw.trim() === '' ? undefined : raw.trim();
    const r = (schema as z.ZodType).safeParse(value);
    if (!r.success) {
      const why = r.error.issues.map((i) => i.message).join('; ');
      const shown = value === undefined ? 'unset' : name === 'PLUMBLINE_TOKEN' ? '(hidden)' : JSON.stringify(value.length > 80 ? `${value.slice(0, 80)}…` : value);
      throw new ConfigError(name, `${name} is ${shown}: expected ${schema.description ?? 'a valid value'} (${why})`);
    }
    out[name] = r.data;
  }
  return toConfig(out as Parsed);
}

function toConfig(p: Parsed): Config {
  const dataDir = resolve(p.PLUMBLINE_DATA_DIR);
  return Object.freeze({
    host: p.PLUMBLINE_HOST,
    port: p.PLUMBLINE_PORT,
    dataDir,
    dbPath: resolve(dataDir, 'plumbline.sqlite'),
    blobDir: resolve(dataDir, 'blobs'),
    redisUrl: p.REDIS_URL ?? null,
    mode: p.REDIS_URL ? 'redis' : 'embedded',
    workerConcurrency: p.PLUMBLINE_WORKER_CONCURRENCY,
    analysisTwoThreads: p.PLUMBLINE_ANALYSIS_TWO_THREADS,
    logLevel: p.PLUMBLINE_LOG_LEVEL,
    maxUploadBytes: p.PLUMBLINE_MAX_UPLOAD_BYTES,
    uploadRatePerMin: p.PLUMBLINE_UPLOAD_RATE_PER_MIN,
    authFailureRatePerMin: p.PLUMBLINE_AUTH_FAILURE_RATE_PER_MIN,
    policyFile: p.PLUMBLINE_POLICY_FILE ? resolve(p.PLUMBLINE_POLICY_FILE) : null,
    demo: p.PLUMBLINE_DEMO,
    publicUrl: p.PLUMBLINE_PUBLIC_URL ?? null,
    token: p.PLUMBLINE_TOKEN ?? null,
    apiUrl: p.PLUMBLINE_API_URL ? p.PLUMBLINE_API_URL.replace(/\/+$/, '') : null,
    corsOrigins: Object.freeze(
      p.PLUMBLINE_CORS_ORIGINS.split(',')
        .map((s) => s.trim())
        .filter((s) => s.length > 0),
    ),
  } satisfies Config);
}

/** A Markdown table of the variables (name, default, meaning), for the README. */
export function configReference(): string {
  const rows = Object.entries(CONFIG_VARIABLES).map(([name, schema]) => {
    const r = (schema as z.ZodType).safeParse(undefined);
    const def = !r.success || r.data === undefined ? '(unset)' : r.data === '' ? '(empty)' : `\`${String(r.data)}\``;
    return `| \`${name}\` | ${def} | ${schema.description ?? ''} |`;
  });
  return ['| variable | default | meaning |', '| --- | --- | --- |', ...rows].join('\n');
}
