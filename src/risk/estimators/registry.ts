import type { EstimatorPlugin } from './estimator.ts';
import { ewmaEstimator } from './ewma.ts';
import { sampleEstimator } from './sample.ts';
import { shrunkEstimator } from './shrunk.ts';

/**
 * The estimators a run computes, in the order their estimates are planned. Adding an
 * estimator is its module in this folder and one `registerEstimator` line here. The
 * worker threads import this file too, so an estimator registered here runs in them;
 * one registered elsewhere at run time (a test's) runs on the main thread only.
 */

const plugins = new Map<string, EstimatorPlugin>();

/** Adds an estimator; returns the call that takes it out again. */
export function registerEstimator<P, S>(plugin: EstimatorPlugin<P, S>): () => void {
  if (plugins.has(plugin.name)) throw new Error(`estimator ${plugin.name} is registered twice`);
  plugins.set(plugin.name, plugin as EstimatorPlugin);
  return () => plugins.delete(plugin.name);
}

registerEstimator(sampleEstimator);
registerEstimator(shrunkEstimator);
registerEstimator(ewmaEstimator);

export function registeredEstimators(): EstimatorPlugin[] {
  return [...plugins.values()];
}

export function estimatorNamed(name: string): EstimatorPlugin {
  const plugin = plugins.get(name);
  if (!plugin) throw new Error(`no estimator named ${name} is registered in this thread`);
  return plugin;
}
