// Times in the reader's own zone with its offset. The server cannot know that zone, so the server
// render (and the hydration pass, which must match it) shows UTC; the browser then switches to
// local time. After hydration, client-side renders show local time at once.
import { useSyncExternalStore } from "react";
import { dateTime, localDateTime } from "./format";

const never = () => () => {};

/** false on the server and during hydration, true after it. */
export function useHydrated(): boolean {
  return useSyncExternalStore(
    never,
    () => true,
    () => false,
  );
}

export function LocalTime({ iso, className }: { iso: string | null | undefined; className?: string }) {
  const hydrated = useHydrated();
  if (!iso) return <span className={className}>—</span>;
  const d = new Date(iso);
  if (Number.isNaN(d.getTime())) return <span className={className}>{iso}</span>;
  return (
    <time dateTime={d.toISOString()} data-local-time={hydrated ? "local" : "utc"} className={className} title={hydrated ? `${dateTime(iso)} (as recorded: ${iso})` : `as recorded: ${iso}`}>
      {hydrated ? localDateTime(iso) : dateTime(iso)}
    </time>
  );
}
