// A report worker thread (issue 16): the heavy read of a sensor report (group sums and the
// sorted included errors over every shot of the selection), its figures and its JSON
// (decision 0011), and the WAL's checkpoints, on its own libSQL connection, off
// the thread that serves every other request. The local libSQL client runs a query
// synchronously on its caller's thread, so on the request thread a read over a million shots
// would hold every other request for its whole length. Started by report-pool.server.ts.
import { getDb } from "~/db/client.server";
import { DEFAULT_RULE } from "~/domain";
import { readSums } from "./report-sums.server";
import { buildReportJson, warmDomain, type BuildInput } from "./report-build.server";

/** A report without rows, read, computed and encoded here (decision 0011); its few KB are copied to the request thread. */
export async function reportJson(input: BuildInput) {
  return buildReportJson(getDb(), input);
}

/**
 * Opens the connection, loads the modules and runs the report's statements once (on a sensor
 * that does not exist: the schema parsed, the query builders compiled, nothing read) before
 * the first report asks.
 */
export async function warm() {
  await readSums(getDb(), { sensorId: "", q: {}, projectIds: null, tolerance: { toleranceMm: 1, tolerancePpm: 0 }, rule: DEFAULT_RULE });
  warmDomain();
  return true;
}

/**
 * A PASSIVE checkpoint of the WAL on this thread's connection (issue 16, decision 0011): the
 * pages the writers committed are copied into the database file here, so no sync answer and
 * no request on the serving thread waits for it. PASSIVE never waits for readers or writers;
 * what a reader still needs stays in the WAL for the next run.
 */
export async function checkpoint() {
  const rs = await getDb().$client.execute("PRAGMA wal_checkpoint(PASSIVE)");
  const row = rs.rows[0] as unknown as ArrayLike<number> | undefined;
  return { busy: Number(row?.[0] ?? 0), walPages: Number(row?.[1] ?? 0), checkpointed: Number(row?.[2] ?? 0) };
}
