// The tablet's copy of the reference data (GET /api/field/reference): refreshed whenever the
// page is online, read by the field screens' clientLoaders from IndexedDB when it is not.
import { fieldDb, getMeta, setMeta } from "./db";
import { trackedFetch } from "./reach";
import type { FieldReference, RefReshoot, RefUser } from "./types";

export type ReferenceCopy = Omit<FieldReference, "user" | "copiedAt"> & { user: RefUser | null; copiedAt: string | null };

export type RefreshOutcome = { ok: true; copiedAt: string } | { ok: false; status: number | null; message: string };

export async function refreshReference(fetchImpl: typeof fetch = (i, init) => fetch(i, init)): Promise<RefreshOutcome> {
  let res: Response;
  // A dead network can hang a request for minutes; past this the copy counts as failed.
  const ctrl = new AbortController();
  const timer = setTimeout(() => ctrl.abort(), 20_000);
  try {
    res = await trackedFetch(fetchImpl, "/api/field/reference", { headers: { Accept: "application/json" }, credentials: "same-origin", signal: ctrl.signal });
  } catch {
    return { ok: false, status: null, message: "No connection: the tablet keeps its last copy." };
  } finally {
    clearTimeout(timer);
  }
  if (!res.ok) return { ok: false, status: res.status, message: `The server answered ${res.status}: the tablet keeps its last copy.` };
  const ref = (await res.json()) as FieldReference;
  const db = fieldDb();
  await db.transaction("rw", [db.sensors, db.sites, db.tapes, db.projects, db.meta], async () => {
    await Promise.all([db.sensors.clear(), db.sites.clear(), db.tapes.clear(), db.projects.clear()]);
    await Promise.all([db.sensors.bulkPut(ref.sensors), db.sites.bulkPut(ref.sites), db.tapes.bulkPut(ref.tapes), db.projects.bulkPut(ref.projects)]);
    await setMeta("user", ref.user);
    await setMeta("referenceCopiedAt", ref.copiedAt);
    // issue 12: kept in meta (no schema bump); a copy without the field clears old requests
    await setMeta("reshoots", ref.reshoots ?? []);
  });
  return { ok: true, copiedAt: ref.copiedAt };
}

export async function readReference(): Promise<ReferenceCopy> {
  const db = fieldDb();
  const [sensors, sites, tapes, projects, user, copiedAt, reshoots] = await Promise.all([
    db.sensors.toArray(),
    db.sites.toArray(),
    db.tapes.toArray(),
    db.projects.toArray(),
    getMeta<RefUser>("user"),
    getMeta<string>("referenceCopiedAt"),
    getMeta<RefReshoot[]>("reshoots"),
  ]);
  const byLabel = (a: { label: string }, b: { label: string }) => a.label.localeCompare(b.label);
  return {
    sensors: sensors.sort(byLabel),
    sites: sites.sort((a, b) => a.name.localeCompare(b.name)),
    tapes: tapes.sort(byLabel),
    projects: projects.sort((a, b) => a.name.localeCompare(b.name)),
    user: user ?? null,
    copiedAt: copiedAt ?? null,
    reshoots: reshoots ?? [],
  };
}
