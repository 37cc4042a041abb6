// `npm run build` (and `npm install`, through "prepare"; `npm test`, through "pretest"):
// compiles src/ to dist/ with tsc (tsconfig.build.json), so the CLI starts without
// compiling TypeScript. The SQL files, the JSON schema and the worker thread's entry are
// found from dist/ at the same relative places as from src/. Nothing to do when dist/ is
// as new as the sources. The build goes to a folder of its own, stamped last, then takes
// dist/'s place, so a CLI starting meanwhile finds either a whole build or none (and then
// runs the sources).
import { execFileSync } from 'node:child_process';
import { renameSync, rmSync, utimesSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import path from 'node:path';
import { DIST_DIR, freshBuild, ROOT, STAMP_FILE } from './buildStamp.js';

if (freshBuild()) process.exit(0);

const started = new Date();
const tsc = path.join(path.dirname(createRequire(import.meta.url).resolve('typescript/package.json')), 'bin', 'tsc');
const staging = `${DIST_DIR}.${process.pid}.tmp`;
const previous = `${DIST_DIR}.${process.pid}.old`;
try {
  execFileSync(process.execPath, [tsc, '-p', path.join(ROOT, 'tsconfig.build.json'), '--outDir', staging], { stdio: 'inherit' });
} catch {
  rmSync(staging, { recursive: true, force: true });
  process.stderr.write('riskfold build: tsc failed (see above); the CLI runs the sources until a build succeeds\n');
  process.exit(1);
}
const stamp = path.join(staging, STAMP_FILE);
writeFileSync(stamp, `built ${started.toISOString()} by scripts/build.js\n`);
utimesSync(stamp, started, started);
rmSync(previous, { recursive: true, force: true });
try {
  renameSync(DIST_DIR, previous);
} catch (err) {
  if (err.code !== 'ENOENT') throw err;
}
renameSync(staging, DIST_DIR);
rmSync(previous, { recursive: true, force: true });
