import { CANONICAL_COLUMNS, type FileKind } from '../config/schema.ts';

/** How a canonical column is read and checked. */
export type FieldType = 'date' | 'id' | 'positive' | 'finite' | 'fraction' | 'currency' | 'text';

export interface FieldSpec {
  name: string;
  type: FieldType;
  required: boolean;
}

export interface KindLayout {
  kind: FileKind;
  /** Raw table the rows go to. */
  table: string;
  /** Canonical columns in table order: required first, then optional. */
  fields: FieldSpec[];
  /** Columns no two rows of one file may share. */
  key: string[];
}

const FIELD_TYPES: Record<string, FieldType> = {
  date: 'date',
  security_id: 'id',
  portfolio_id: 'id',
  benchmark_id: 'id',
  price: 'positive',
  rate: 'positive',
  quantity: 'finite',
  weight: 'fraction',
  currency: 'currency',
  name: 'text',
  asset_class: 'text',
};

const TABLES: Record<FileKind, string> = { prices: 'prices', positions: 'positions', fx: 'fx_rates', securities: 'securities', benchmarks: 'benchmarks' };

const KEYS: Record<FileKind, string[]> = {
  prices: ['date', 'security_id'],
  positions: ['date', 'portfolio_id', 'security_id'],
  fx: ['date', 'currency'],
  securities: ['security_id'],
  benchmarks: ['date', 'benchmark_id', 'security_id'],
};

/** The layout of one kind, built from the config schema's canonical columns. */
export function layoutOf(kind: FileKind): KindLayout {
  const { required, optional } = CANONICAL_COLUMNS[kind];
  const field = (name: string, isRequired: boolean): FieldSpec => {
    const type = FIELD_TYPES[name];
    if (type === undefined) throw new Error(`no field type for canonical column ${name}`);
    return { name, type, required: isRequired };
  };
  return {
    kind,
    table: TABLES[kind],
    fields: [...required.map((n) => field(n, true)), ...optional.map((n) => field(n, false))],
    key: KEYS[kind],
  };
}
