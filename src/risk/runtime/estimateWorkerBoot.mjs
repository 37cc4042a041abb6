// A worker thread does not inherit the tsx loader of the thread that started it:
// register it here, then load the TypeScript worker (as bin/riskfold.js does for the CLI
// without a build). The compiled worker in dist/ is started directly (parallelEstimates.ts).
import { register } from 'tsx/esm/api';

register();
await import('./estimateWorker.ts');
