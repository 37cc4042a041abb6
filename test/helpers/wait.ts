/**
 * Polls `condition` until it returns a truthy value (which is returned) or the time is
 * up (then it throws, naming what was awaited). Watcher tests use it instead of sleeps.
 */
export async function waitFor<T>(
  condition: () => T | Promise<T>,
  timeoutMs = 10_000,
  what = 'condition',
  pollMs = 25,
): Promise<NonNullable<T>> {
  const deadline = Date.now() + timeoutMs;
  let lastError: unknown;
  for (;;) {
    try {
      const value = await condition();
      if (value) return value as NonNullable<T>;
    } catch (err) {
      lastError = err;
    }
    if (Date.now() >= deadline) {
      const detail = lastError instanceof Error ? ` (last error: ${lastError.message})` : '';
      throw new Error(`timed out after ${timeoutMs} ms waiting for ${what}${detail}`);
    }
    await new Promise((resolve) => setTimeout(resolve, pollMs));
  }
}
