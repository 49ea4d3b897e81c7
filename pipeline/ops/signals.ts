/**
 * SIGINT/SIGTERM become an abort: the runner stops at its next step boundary (terminating workers),
 * removes its partial folder and the lock is released on the way out. A second signal is not
 * caught, so it kills the process at once, as users expect of a second Ctrl-C.
 */
const SIGNALS = ['SIGINT', 'SIGTERM'] as const;

export async function abortOnSignals<T>(work: (signal: AbortSignal) => Promise<T>): Promise<T> {
  const ctrl = new AbortController();
  const handlers = SIGNALS.map((sig) => {
    const h = () => ctrl.abort(sig);
    process.once(sig, h);
    return [sig, h] as const;
  });
  try {
    return await work(ctrl.signal);
  } finally {
    for (const [sig, h] of handlers) process.removeListener(sig, h);
  }
}
