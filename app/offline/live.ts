// React binding of Dexie's liveQuery: the component re-renders whenever the rows it read
// change, in this tab, another tab or the service worker.
import { liveQuery } from "dexie";
import { useEffect, useState } from "react";

export function useLiveQuery<T>(query: () => Promise<T> | T, deps: unknown[], initial: T): T {
  const [value, setValue] = useState<T>(initial);
  useEffect(() => {
    const sub = liveQuery(query).subscribe({ next: setValue, error: (e) => console.warn("live query failed", e) });
    return () => sub.unsubscribe();
    // eslint-disable-next-line react-hooks/exhaustive-deps
  }, deps);
  return value;
}
