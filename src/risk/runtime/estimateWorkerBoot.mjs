// A worker thread does not inherit the tsx loader of the thread that started it:
// register it here, then load the TypeScript worker (as bin/riskfold.js does for the CLI):
// the estimate worker, or the module named in workerData.module (the loss stage's).
import { workerData } from 'node:worker_threads';
import { register } from 'tsx/esm/api';

register();
await import(workerData?.module ?? './estimateWorker.ts');
