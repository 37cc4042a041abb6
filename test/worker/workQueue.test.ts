import { describe, expect, it } from 'vitest';
import { WorkQueue } from '../../src/worker/workQueue.ts';
import { waitFor } from '../helpers/wait.ts';

/** A batch runner whose batches finish only when the test releases them. */
function gatedRunner() {
  const batches: string[][] = [];
  const releases: (() => void)[] = [];
  const run = (files: string[]) =>
    new Promise<void>((resolve) => {
      batches.push(files);
      releases.push(resolve);
    });
  return { batches, run, release: () => releases.shift()?.() };
}

describe('WorkQueue', () => {
  it('runs the catch-up first, then files that arrived meanwhile as the next batch', async () => {
    const r = gatedRunner();
    const q = new WorkQueue(r.run);
    q.addFiles(['/in/b.csv']);
    q.addFiles(['/in/a.csv']);
    q.start(['/in/a.csv']);
    await waitFor(() => r.batches.length === 1, 1000, 'the catch-up batch');
    expect(r.batches[0]).toEqual(['/in/a.csv']);
    q.addFiles(['/in/c.csv']);
    r.release();
    await waitFor(() => r.batches.length === 2, 1000, 'the second batch');
    // a.csv was in the catch-up, so only the others, in arrival order
    expect(r.batches[1]).toEqual(['/in/b.csv', '/in/c.csv']);
    r.release();
    await q.idle();
  });

  it('runs an empty catch-up batch (the resume of a killed run needs it)', async () => {
    const r = gatedRunner();
    const q = new WorkQueue(r.run);
    q.start([]);
    await waitFor(() => r.batches.length === 1, 1000, 'the catch-up batch');
    expect(r.batches[0]).toEqual([]);
    r.release();
    await q.idle();
  });

  it('runs exclusive jobs between batches, files first, and returns their value', async () => {
    const r = gatedRunner();
    const order: string[] = [];
    const q = new WorkQueue((files) => {
      order.push(`batch ${files.join(' ')}`);
      return r.run(files);
    });
    q.start(['/in/a.csv']);
    await waitFor(() => r.batches.length === 1, 1000, 'the first batch');
    const job = q.exclusive(async () => {
      order.push('job');
      return 42;
    });
    q.addFiles(['/in/b.csv']);
    r.release();
    await waitFor(() => r.batches.length === 2, 1000, 'the second batch');
    r.release();
    await expect(job).resolves.toBe(42);
    expect(order).toEqual(['batch /in/a.csv', 'batch /in/b.csv', 'job']);
  });

  it('on stop lets the running batch finish, refuses waiting jobs and leaves waiting files', async () => {
    const r = gatedRunner();
    const q = new WorkQueue(r.run);
    q.start(['/in/a.csv']);
    await waitFor(() => r.batches.length === 1, 1000, 'the first batch');
    q.addFiles(['/in/b.csv']);
    const job = q.exclusive(async () => 'never');
    let stopped = false;
    const stopping = q.stop().then(() => (stopped = true));
    await expect(job).rejects.toThrow(/stopping/);
    expect(stopped).toBe(false);
    r.release();
    await stopping;
    expect(r.batches).toEqual([['/in/a.csv']]);
    expect(q.waiting).toBe(1);
  });
});
