/** Polling helpers for tests that wait on a real service. */

export const sleep = (ms: number): Promise<void> => new Promise((resolve) => setTimeout(resolve, ms));

/** Polls `check` every 100 ms until it holds; fails naming `what` after `timeoutMs`. */
export async function until(what: string, check: () => boolean | Promise<boolean>, timeoutMs = 90_000): Promise<void> {
  const deadline = performance.now() + timeoutMs;
  while (performance.now() < deadline) {
    if (await check()) return;
    await sleep(100);
  }
  throw new Error(`timed out after ${timeoutMs} ms waiting for ${what}`);
}
