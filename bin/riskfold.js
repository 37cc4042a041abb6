#!/usr/bin/env node
// Runs the compiled CLI in dist/ (`npm run build`, which `npm install` runs), which starts
// without compiling TypeScript. Without a build, or when a source changed after it, it
// runs the sources through tsx instead: slower to start, never stale.
import { freshBuild } from '../scripts/buildStamp.js';

const built = freshBuild();
if (built) {
  await import(built);
} else {
  if (process.stderr.isTTY) process.stderr.write('riskfold: running the sources (src/ changed since the last build; "npm run build" makes start-up fast)\n');
  const { register } = await import('tsx/esm/api');
  register();
  await import('../src/cli/main.ts');
}
