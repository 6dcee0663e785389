import { resolve } from 'node:path';
import { describe, expect, it } from 'vitest';
import { ConfigError, configReference, loadConfig } from './config.ts';

describe('loadConfig defaults', () => {
  it('gives the documented defaults for an empty environment', () => {
    const c = loadConfig({});
    expect(c.host).toBe('127.0.0.1');
    expect(c.port).toBe(8640);
    expect(c.dataDir).toBe(resolve('./.data'));
    expect(c.mode).toBe('embedded');
    expect(c.redisUrl).toBeNull();
    expect(c.workerConcurrency).toBe(1);
    expect(c.analysisTwoThreads).toBe(true);
    expect(c.maxUploadBytes).toBe(2 * 1024 ** 3);
    expect(c.demo).toBe(false);
    expect(c.corsOrigins).toEqual([]);
    expect(c.apiUrl).toBeNull();
    expect(Object.isFrozen(c)).toBe(true);
  });
  it('treats empty strings as unset', () => {
    expect(loadConfig({ PLUMBLINE_PORT: '' }).port).toBe(8640);
  });
});

describe('loadConfig values', () => {
  it('parses every kind of variable', () => {
    const c = loadConfig({
      PLUMBLINE_PORT: '9000',
      REDIS_URL: 'redis://127.0.0.1:6379',
      PLUMBLINE_WORKER_CONCURRENCY: '3',
      PLUMBLINE_DEMO: 'yes',
      PLUMBLINE_ANALYSIS_TWO_THREADS: '0',
      PLUMBLINE_CORS_ORIGINS: 'https://a.example, https://b.example',
      PLUMBLINE_LOG_LEVEL: 'debug',
      PLUMBLINE_API_URL: 'https://plumbline.saltmarsh.example/',
    });
    expect(c.apiUrl).toBe('https://plumbline.saltmarsh.example');
    expect(c.port).toBe(9000);
    expect(c.mode).toBe('redis');
    expect(c.workerConcurrency).toBe(3);
    expect(c.demo).toBe(true);
    expect(c.analysisTwoThreads).toBe(false);
    expect(c.corsOrigins).toEqual(['https://a.example', 'https://b.example']);
    expect(c.logLevel).toBe('debug');
  });
});

describe('loadConfig errors', () => {
  const cases: Array<[string, string, RegExp]> = [
    ['PLUMBLINE_PORT', 'eighty', /PLUMBLINE_PORT is "eighty": expected TCP port/],
    ['PLUMBLINE_PORT', '70000', /PLUMBLINE_PORT is "70000"/],
    ['REDIS_URL', 'localhost:6379', /REDIS_URL is "localhost:6379": expected Redis/],
    ['PLUMBLINE_LOG_LEVEL', 'loud', /PLUMBLINE_LOG_LEVEL is "loud": expected log level/],
    ['PLUMBLINE_DEMO', 'maybe', /PLUMBLINE_DEMO is "maybe"/],
    ['PLUMBLINE_MAX_UPLOAD_BYTES', '-1', /PLUMBLINE_MAX_UPLOAD_BYTES is "-1"/],
    ['PLUMBLINE_PUBLIC_URL', 'not a url', /PLUMBLINE_PUBLIC_URL/],
    ['PLUMBLINE_API_URL', 'ftp://api.example', /PLUMBLINE_API_URL is "ftp:\/\/api.example": expected base URL of the API/],
  ];
  for (const [name, value, re] of cases) {
    it(`names ${name}=${value}`, () => {
      let err: unknown;
      try {
        loadConfig({ [name]: value });
      } catch (e) {
        err = e;
      }
      expect(err).toBeInstanceOf(ConfigError);
      expect((err as ConfigError).variable).toBe(name);
      expect((err as Error).message).toMatch(re);
    });
  }
});

describe('configReference', () => {
  it('lists every variable once', () => {
    const table = configReference();
    expect(table.match(/^\| `PLUMBLINE_/gm)?.length).toBe(15);
    expect(table).toContain('| `REDIS_URL` | (unset) |');
    expect(table).toContain('| `PLUMBLINE_PORT` | `8640` |');
  });
});
