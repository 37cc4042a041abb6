import { writeFileSync } from 'node:fs';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { z } from 'zod';
import { configSchema } from './schema.ts';

/** The JSON Schema shipped beside the code (and copied by `riskfold init`) for editors. */
export const SCHEMA_FILE = path.resolve(import.meta.dirname, '../../pipeline.config.schema.json');

type JsonSchema = {
  type?: string | string[];
  enum?: unknown[];
  const?: unknown;
  default?: unknown;
  description?: string;
  properties?: Record<string, JsonSchema>;
  items?: JsonSchema;
  additionalProperties?: boolean | JsonSchema;
  anyOf?: JsonSchema[];
  format?: string;
  pattern?: string;
  minimum?: number;
  maximum?: number;
  exclusiveMinimum?: number;
  exclusiveMaximum?: number;
};

/** Input side of the schema: fields with a default are optional, as a user writes the file. */
export function buildJsonSchema(): Record<string, unknown> {
  return {
    title: 'riskfold pipeline.config.json',
    ...z.toJSONSchema(configSchema, { io: 'input' }),
  } as Record<string, unknown>;
}

export function jsonSchemaText(): string {
  return `${JSON.stringify(buildJsonSchema(), null, 2)}\n`;
}

/** The README's config reference: one row per field (nested fields dotted, array items as `[]`). */
export function renderConfigReference(): string {
  const rows: string[] = ['| field | type | default | description |', '|---|---|---|---|'];
  const walk = (schema: JsonSchema, prefix: string) => {
    for (const [name, field] of Object.entries(schema.properties ?? {})) {
      if (name === '$schema') continue;
      const key = prefix ? `${prefix}.${name}` : name;
      rows.push(`| \`${key}\` | ${typeText(field)} | ${defaultText(field)} | ${cell(field.description ?? '')} |`);
      if (field.properties) walk(field, key);
      if (field.items?.properties) walk(field.items, `${key}[]`);
    }
  };
  walk(buildJsonSchema() as JsonSchema, '');
  return `${rows.join('\n')}\n`;
}

function typeText(field: JsonSchema): string {
  if (field.enum) return field.enum.map((v) => `\`${JSON.stringify(v)}\``).join(' \\| ');
  if (field.anyOf) return field.anyOf.map(typeText).join(' \\| ');
  const type = Array.isArray(field.type) ? field.type.join(' \\| ') : (field.type ?? 'any');
  if (type === 'array' && field.items) return `array of ${field.items.properties ? 'objects' : typeText(field.items)}`;
  const bounds = [
    field.minimum !== undefined && field.minimum !== Number.MIN_SAFE_INTEGER ? `>= ${field.minimum}` : '',
    field.exclusiveMinimum !== undefined ? `> ${field.exclusiveMinimum}` : '',
    // zod writes the safe-integer range onto every int(); it says nothing to a reader
    field.maximum !== undefined && field.maximum !== Number.MAX_SAFE_INTEGER ? `<= ${field.maximum}` : '',
    field.exclusiveMaximum !== undefined ? `< ${field.exclusiveMaximum}` : '',
    field.format ? field.format : '',
    field.pattern ? `\`${field.pattern}\`` : '',
  ].filter(Boolean);
  return bounds.length > 0 ? `${type} (${bounds.join(', ')})` : type;
}

function defaultText(field: JsonSchema): string {
  if (field.default === undefined) return '';
  // objects with their own documented fields: the defaults are listed on those rows
  if (field.properties) return '';
  return cell(`\`${JSON.stringify(field.default)}\``);
}

function cell(text: string): string {
  return text.replaceAll('|', '\\|').replaceAll('\n', ' ');
}

// `npm run schema` writes the shipped file; `npm run schema -- --markdown` prints the reference.
if (process.argv[1] && import.meta.url === pathToFileURL(path.resolve(process.argv[1])).href) {
  if (process.argv.includes('--markdown')) {
    process.stdout.write(renderConfigReference());
  } else {
    writeFileSync(SCHEMA_FILE, jsonSchemaText());
    process.stdout.write(`wrote ${SCHEMA_FILE}\n`);
  }
}
