import { createRequire } from 'node:module';
import type * as Api from '@duckdb/node-api';

/**
 * The values riskfold takes from @duckdb/node-api, loaded with require(). The package is
 * CommonJS of about a hundred modules; imported from ESM, Node runs its CommonJS lexer
 * over every one of them to find named exports, which cost a read command (`sql`) a
 * third of its start-up. Types still come from `import type` of the package.
 */
const api = createRequire(import.meta.url)('@duckdb/node-api') as typeof Api;

export const DuckDBInstance = api.DuckDBInstance;
export type DuckDBInstance = Api.DuckDBInstance;
export const DuckDBDataChunk = api.DuckDBDataChunk;
export type DuckDBDataChunk = Api.DuckDBDataChunk;
export const DuckDBTypeId = api.DuckDBTypeId;
export type DuckDBTypeId = Api.DuckDBTypeId;
export const StatementType = api.StatementType;
export type StatementType = Api.StatementType;
export const { BOOLEAN, DOUBLE, INTEGER, VARCHAR, blobValue } = api;
