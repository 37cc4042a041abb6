import type { EstimatorPlugin } from './estimator.ts';
import { ewmaEstimator } from './ewma.ts';
import { sampleEstimator } from './sample.ts';
import { shrunkEstimator } from './shrunk.ts';

/**
 * The estimators a run computes, in the order their estimates are planned. Adding an
 * estimator is its module in this folder and one `registerEstimator` line here. The
 * worker threads import this file too, so an estimator registered here runs in them;
 * one added at run time runs in them when it is added by its module's URL
 * (`registerEstimatorModule`), which each worker thread imports when it starts.
 */

const plugins = new Map<string, EstimatorPlugin>();
/** URLs of the modules added at run time, in order. */
const modules: string[] = [];

/** Adds an estimator on this thread only; returns the call that takes it out again. */
export function registerEstimator<P, S>(plugin: EstimatorPlugin<P, S>): () => void {
  if (plugins.has(plugin.name)) throw new Error(`estimator ${plugin.name} is registered twice`);
  plugins.set(plugin.name, plugin as EstimatorPlugin);
  return () => plugins.delete(plugin.name);
}

registerEstimator(sampleEstimator);
registerEstimator(shrunkEstimator);
registerEstimator(ewmaEstimator);

/**
 * Adds the estimator a module exports as `estimator`, by the module's URL (a `file:`
 * URL, e.g. `new URL('./mine.ts', import.meta.url)`): the risk stage's worker threads
 * import the same URL when they start, so its estimates run there too. Returns the call
 * that takes it out again.
 */
export async function registerEstimatorModule(url: string | URL): Promise<() => void> {
  const href = String(url);
  const loaded = (await import(href)) as { estimator?: EstimatorPlugin };
  if (loaded.estimator === undefined) throw new Error(`estimator module ${href} exports no "estimator"`);
  const unregister = registerEstimator(loaded.estimator);
  modules.push(href);
  return () => {
    unregister();
    modules.splice(modules.indexOf(href), 1);
  };
}

/** The modules added at run time, for a worker thread to import at boot. */
export function estimatorModules(): string[] {
  return [...modules];
}

export function registeredEstimators(): EstimatorPlugin[] {
  return [...plugins.values()];
}

export function estimatorNamed(name: string): EstimatorPlugin {
  const plugin = plugins.get(name);
  if (!plugin) throw new Error(`no estimator named ${name} is registered in this thread (one added at run time reaches the worker threads through registerEstimatorModule)`);
  return plugin;
}
