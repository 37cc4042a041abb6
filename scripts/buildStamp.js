// Whether dist/ (what `npm run build` compiles from src/) is as new as what it is built
// from. bin/riskfold.js asks before every start, so an edited source is never answered by
// stale compiled code; scripts/build.js asks before building, and writes the stamp.
import { existsSync, readdirSync, statSync } from 'node:fs';
import path from 'node:path';
import { pathToFileURL } from 'node:url';

export const ROOT = path.resolve(import.meta.dirname, '..');
const SRC_DIR = path.join(ROOT, 'src');
const COMPILER_SETTINGS = ['tsconfig.json', 'tsconfig.build.json'].map((f) => path.join(ROOT, f));
export const DIST_DIR = path.join(ROOT, 'dist');
/** Written once tsc has succeeded, dated when the build started: a source saved during the build is newer. */
export const STAMP_FILE = 'built';

/** The built CLI's URL, or null when there is no finished build or a source changed after it started. */
export function freshBuild() {
  let built;
  try {
    built = statSync(path.join(DIST_DIR, STAMP_FILE)).mtimeMs;
  } catch {
    return null;
  }
  return newestInputChange() > built ? null : pathToFileURL(path.join(DIST_DIR, 'cli', 'main.js')).href;
}

/** The latest modification time of the compiler settings and under src/: files, and folders (whose time changes when a file in one is removed or renamed). */
function newestInputChange() {
  if (!existsSync(SRC_DIR)) return 0; // an installed copy without its sources runs what it has
  try {
    return Math.max(newestUnder(SRC_DIR), ...COMPILER_SETTINGS.map((f) => statSync(f).mtimeMs));
  } catch {
    return Infinity; // a file went while we looked: run the sources
  }
}

function newestUnder(dir) {
  let newest = statSync(dir).mtimeMs;
  for (const entry of readdirSync(dir, { withFileTypes: true })) {
    const file = path.join(dir, entry.name);
    newest = Math.max(newest, entry.isDirectory() ? newestUnder(file) : statSync(file).mtimeMs);
  }
  return newest;
}
