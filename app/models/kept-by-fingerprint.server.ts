// A small per-database map of computed answers (the report without rows, the QA page's series),
// each valid while the report's fingerprint (report-state.server.ts) is unchanged. Least recently
// used dropped past `max`. Correctness never depends on it: a changed fingerprint is a miss.
import type { Db } from "~/db/client.server";

export function keptByFingerprint<V>(max: number) {
  const byDb = new WeakMap<Db, Map<string, { fingerprint: string; value: V }>>();
  const mapOf = (db: Db) => {
    let m = byDb.get(db);
    if (!m) byDb.set(db, (m = new Map()));
    return m;
  };
  return {
    get(db: Db, key: string, fingerprint: string): V | undefined {
      const m = mapOf(db);
      const hit = m.get(key);
      if (!hit || hit.fingerprint !== fingerprint) return undefined;
      m.delete(key);
      m.set(key, hit);
      return hit.value;
    },
    set(db: Db, key: string, fingerprint: string, value: V) {
      const m = mapOf(db);
      m.delete(key);
      m.set(key, { fingerprint, value });
      if (m.size > max) m.delete(m.keys().next().value!);
    },
    clear(db: Db) {
      byDb.delete(db);
    },
  };
}
