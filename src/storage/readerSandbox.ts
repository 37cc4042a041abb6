import path from 'node:path';
import { sqlString, type Database } from './database.ts';

/**
 * Closes a reader's DuckDB session to everything but its database: no files, no URLs,
 * no extension downloads or loads, except the folders the user opted into (`sql
 * --read-files DIR`). Then the configuration is locked, so a query cannot `SET` its way
 * back out. DuckDB adds its own temporary folder to the allowed list for spilling.
 */
export async function lockDownReader(db: Database, readableDirs: readonly string[] = []): Promise<void> {
  // a trailing separator, so /data/in does not also open /data/inbox (DuckDB matches by prefix)
  const dirs = readableDirs.map((d) => `${path.resolve(d)}${path.sep}`);
  await db.run(`set allowed_directories = [${dirs.map(sqlString).join(', ')}]`);
  await db.run('set autoinstall_known_extensions = false');
  await db.run('set autoload_known_extensions = false');
  await db.run('set enable_external_access = false');
  await db.run('set lock_configuration = true');
}
