// React binding of Dexie's liveQuery: the component re-renders whenever the rows it read
// change, in this tab, another tab or the service worker.
import { liveQuery } from "dexie";
import { startTransition, useEffect, useState } from "react";

export function useLiveQuery<T>(query: () => Promise<T> | T, deps: unknown[], initial: T): T {
  const [value, setValue] = useState<T>(initial);
  useEffect(() => {
    // A change is a transition: React renders it in slices and yields between them, so a sync
    // that flips 1,200 shots to "synced" re-renders their list without freezing typing or taps.
    const sub = liveQuery(query).subscribe({ next: (v) => startTransition(() => setValue(v)), error: (e) => console.warn("live query failed", e) });
    return () => sub.unsubscribe();
    // eslint-disable-next-line react-hooks/exhaustive-deps
  }, deps);
  return value;
}
