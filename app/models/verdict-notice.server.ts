// The failed-verdict notice after a sync (issue 16). notifyFailedVerdicts computes each synced
// sensor's report; on the production server (sync worker pool on) a sync is answered first and
// the notice runs afterwards (NOTICE_GATHER_MS later), one run at a time: sensors synced while a
// run waits or is under way are gathered and checked together by the next run, so six tablets syncing the same sensor cost
// one report computation per run, not one per batch. Without the pool (tests, dev, the CLI)
// the request still waits for the notice, as before.
import { notifyFailedVerdicts } from "./signoffs.server";
import { syncPool } from "./sync-pool.server";

const pending = new Set<string>();
let running: Promise<void> | null = null;

/**
 * How long a run waits for more syncs before checking (issue 16): a tablet's outbox arrives as
 * back-to-back batches, and each check computes the sensor's whole report, which cost as much
 * server CPU as a third of the ingest itself when run after every batch (server bench). A
 * second later is as good for a mail, and the batches of that second share one check.
 */
export const NOTICE_GATHER_MS = 1000;

async function drain() {
  // the sync's answer leaves first; the batches that follow within the gathering time join this
  // run, and those that arrive while it runs, the next one (which waits as long again)
  for (;;) {
    await new Promise<void>((resolve) => setTimeout(resolve, NOTICE_GATHER_MS));
    if (!pending.size) break;
    const ids = [...pending];
    pending.clear();
    try {
      await notifyFailedVerdicts(ids);
    } catch (e) {
      // the sync is stored and answered; the next sync of the sensor checks its verdict again
      console.error("sync: the failed-verdict check after a sync failed", e);
    }
  }
  running = null;
}

export async function noticeFailedVerdicts(sensorIds: string[]): Promise<void> {
  if (!sensorIds.length) return;
  if (!syncPool()) {
    await notifyFailedVerdicts(sensorIds);
    return;
  }
  for (const id of sensorIds) pending.add(id);
  running ??= drain();
}

/** For tests and shutdown: the notice runs under way, finished. */
export function verdictNoticesSettled(): Promise<void> {
  return running ?? Promise.resolve();
}
