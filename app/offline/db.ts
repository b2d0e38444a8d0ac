// The tablet's IndexedDB (Dexie): the outbox (sessions, shots, photos as Blobs) and the copy of
// the reference data. Used by the field pages and by the service worker (Background Sync).
import { Dexie, type Table } from "dexie";
import type { LocalPhoto, LocalSession, LocalShot, RefProject, RefSensor, RefSite, RefTape } from "./types";

export type MetaRow = { key: string; value: unknown };

export class FieldDb extends Dexie {
  sessions!: Table<LocalSession, string>;
  shots!: Table<LocalShot, string>;
  photos!: Table<LocalPhoto, string>;
  sensors!: Table<RefSensor, string>;
  sites!: Table<RefSite, string>;
  tapes!: Table<RefTape, string>;
  projects!: Table<RefProject, string>;
  meta!: Table<MetaRow, string>;

  constructor(name = "shotbook-field") {
    super(name, { chromeTransactionDurability: "strict" });
    this.version(1).stores({
      sessions: "id, state, queuedAt",
      shots: "id, sessionId, state, queuedAt, [sessionId+state]",
      photos: "id, shotId, state, queuedAt",
      sensors: "id",
      sites: "id",
      tapes: "id",
      projects: "id",
      meta: "key",
    });
  }
}

let instance: FieldDb | undefined;

export function fieldDb(): FieldDb {
  if (!instance) instance = new FieldDb();
  return instance;
}

export async function getMeta<T>(key: string): Promise<T | undefined> {
  const row = await fieldDb().meta.get(key);
  return row?.value as T | undefined;
}

export async function setMeta(key: string, value: unknown) {
  await fieldDb().meta.put({ key, value });
}

/** A stable name for this tablet, made once: the `deviceId` of every sync. */
export async function deviceId(): Promise<string> {
  const db = fieldDb();
  return db.transaction("rw", db.meta, async () => {
    const have = await getMeta<string>("deviceId");
    if (have) return have;
    const made = `tablet-${crypto.randomUUID().slice(0, 8)}`;
    await setMeta("deviceId", made);
    return made;
  });
}

let counter = 0;
/** Queue order: milliseconds with a tie-breaker, so records saved in one millisecond keep their order. */
export function queueStamp() {
  counter = (counter + 1) % 1000;
  return Date.now() * 1000 + counter;
}
