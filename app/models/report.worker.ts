// A report worker thread (issue 16): the heavy read of a sensor report (group sums and the
// sorted included errors over every shot of the selection) on its own libSQL connection, off
// the thread that serves every other request. The local libSQL client runs a query
// synchronously on its caller's thread, so on the request thread a read over a million shots
// would hold every other request for its whole length. Started by report-pool.server.ts.
import { getDb } from "~/db/client.server";
import { DEFAULT_RULE } from "~/domain";
import { readSums, type SumsInput } from "./report-sums.server";

export function reportSums(input: SumsInput) {
  return readSums(getDb(), input);
}

/**
 * Opens the connection, loads the modules and runs the report's statements once (on a sensor
 * that does not exist: the schema parsed, the query builders compiled, nothing read) before
 * the first report asks.
 */
export async function warm() {
  await readSums(getDb(), { sensorId: "", q: {}, projectIds: null, tolerance: { toleranceMm: 1, tolerancePpm: 0 }, rule: DEFAULT_RULE });
  return true;
}
