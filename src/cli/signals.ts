/** The process signals a long-running verb (watch, demo) stops on. */

/** Resolves with the name of the first SIGTERM or SIGINT; both listeners are removed then. */
export function stopSignals(): Promise<string> {
  return new Promise((resolve) => {
    const on = (signal: NodeJS.Signals): void => {
      process.off('SIGTERM', on);
      process.off('SIGINT', on);
      resolve(signal);
    };
    process.once('SIGTERM', on);
    process.once('SIGINT', on);
  });
}
