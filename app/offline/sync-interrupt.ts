// A page's own sync run can be told to give up at its next back-off (see interruptSync).
// A run waiting out a back-off holds the send lock for up to a quarter of a minute while the
// network is gone; discarding a session waits for that lock (outbox.ts). The page asks its own
// run to give up instead: the sleep ends at once and nothing more is sent in that run.
let interrupted = false;
const wakers = new Set<() => void>();

/** Ends this page's sync run at its next back-off (or before its next request); the next run starts afresh. */
export function interruptSync() {
  interrupted = true;
  for (const wake of wakers) wake();
}

export function interruptibleSleep(sleep: (ms: number) => Promise<void>, ms: number) {
  return new Promise<void>((resolve) => {
    const wake = () => {
      wakers.delete(wake);
      resolve();
    };
    wakers.add(wake);
    void sleep(ms).then(wake);
  });
}

export function isInterrupted() {
  return interrupted;
}

/** A new run starts afresh. */
export function resetInterrupt() {
  interrupted = false;
}
