// A worker thread does not inherit the tsx loader of the thread that started it:
// register it here, then load the TypeScript worker named in workerData.module (as
// bin/riskfold.js does for the CLI without a build). A compiled worker in dist/ is
// started directly (workerThread in parallelEstimates.ts).
import { workerData } from 'node:worker_threads';
import { register } from 'tsx/esm/api';

register();
await import(workerData.module);
