import { readFile } from 'node:fs/promises';
import { describe, expect, it } from 'vitest';
import { manifestJsonSchemaText, SCHEMA_PATH } from './export-schema.ts';

describe('docs/run-manifest.schema.json', () => {
  it('equals the schema generated from the zod manifest (run export-schema.ts after changing it)', async () => {
    expect(await readFile(SCHEMA_PATH, 'utf8')).toBe(manifestJsonSchemaText());
  });
  it('is a closed object schema requiring the core fields', () => {
    const schema = JSON.parse(manifestJsonSchemaText()) as { required: string[]; additionalProperties: boolean };
    expect(schema.additionalProperties).toBe(false);
    expect(schema.required).toEqual(expect.arrayContaining(['format', 'robot_id', 'run_id', 'site', 'odometry', 'imu', 'extrinsics']));
    expect(schema.required).not.toContain('software'); // has a default, so optional in run.json
  });
});
