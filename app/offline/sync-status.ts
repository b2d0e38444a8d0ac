// The sync status the field screens show (running, progress, last error, next retry), kept in
// IndexedDB so the page and the service worker's Background Sync share it.
import { getMeta, setMeta } from "./db";
import type { SyncStatus } from "./types";

export const STATUS_KEY = "syncStatus";

const IDLE: SyncStatus = {
  running: false,
  phase: "idle",
  done: 0,
  total: 0,
  needsSignIn: false,
  lastError: null,
  lastSyncAt: null,
  nextRetryAt: null,
  updatedAt: 0,
};

export async function syncStatus(): Promise<SyncStatus> {
  const s = { ...IDLE, ...((await getMeta<SyncStatus>(STATUS_KEY)) ?? {}) };
  if (s.running && Date.now() - s.updatedAt > 60_000) s.running = false;
  return s;
}

export async function patchStatus(p: Partial<SyncStatus>) {
  const cur = await syncStatus();
  await setMeta(STATUS_KEY, { ...cur, ...p, updatedAt: Date.now() });
}

/** The page clears a stale "sign in to send" once the server knows the user again. */
export async function clearSignInPause() {
  const s = await syncStatus();
  if (s.needsSignIn) await patchStatus({ needsSignIn: false, lastError: null });
}
