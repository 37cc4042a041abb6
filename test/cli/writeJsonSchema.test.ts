import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { configSchema } from '../../src/config/schema.ts';
import { jsonSchemaText, renderConfigReference, SCHEMA_FILE } from '../../src/config/writeJsonSchema.ts';

describe('the shipped JSON Schema', () => {
  it('equals what the zod schema generates now (run "npm run schema" after changing the config)', () => {
    expect(readFileSync(SCHEMA_FILE, 'utf8')).toBe(jsonSchemaText());
  });

  // JSON Schema 2020-12: a property left out of "required" may be omitted by the user
  it('lets a user leave out every defaulted field (input side of the schema)', () => {
    const schema = JSON.parse(jsonSchemaText()) as { required?: string[]; properties: Record<string, unknown> };
    expect(schema.required ?? []).toEqual([]);
    expect(Object.keys(schema.properties)).toEqual(expect.arrayContaining(['inbox', 'database', 'risk', 'limits', 'alerts']));
  });
});

describe('renderConfigReference', () => {
  it('has one row per top-level field with its default and description', () => {
    const md = renderConfigReference();
    for (const key of Object.keys(configSchema.shape).filter((k) => k !== '$schema')) {
      expect(md).toContain(`| \`${key}\` |`);
    }
    expect(md).toContain('| `risk.tradingDaysPerYear` | integer (> 0) | `252` |');
    expect(md).toContain('| `limits[].limit` |');
  });
});
