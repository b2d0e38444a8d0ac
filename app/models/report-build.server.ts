// A sensor report without its per-shot rows, from the database to its JSON bytes (issue 16,
// docs/decisions/0011): the sums read, the groups, the domain's figures, the traceability and
// the JSON, in one call. On the production server it runs on a report worker thread
// (report-pool.server.ts), so the request thread only reads the report's fingerprint, parses
// the few kilobytes that come back and sends them: measured under 6 syncing tablets, the
// groups and figures of a report computed on the request thread (a new one after every sync,
// 2–6 thousand groups for a sensor with hundreds of sessions) were its longest holds and most
// of its garbage.
import type { Db } from "~/db/client.server";
import type { sensors } from "~/db/schema";
import { DEFAULT_RULE, reportFromAggregates } from "~/domain";
import { sensorSpecOf } from "./registry-context.server";
import { toJson, traceabilityOf } from "./report-json";
import type { CertRow } from "./report-state.server";
import { groupsOf, readSums, type SumsInput } from "./report-sums.server";

/** Everything the report needs besides the shots: the request thread has it from the report's state read. */
export type BuildInput = {
  sums: SumsInput;
  sensor: typeof sensors.$inferSelect;
  ruleProjectId: string | null;
  lastBias: number | null;
  tapeCerts: CertRow[];
  edmCerts: CertRow[];
};

const encoder = new TextEncoder();

/** What a report without rows comes back as: its JSON, and the outlier rule's median and cut the streamed rows flag by. */
export type BuiltJson = { json: Uint8Array<ArrayBuffer>; outlier: { median: number; cut: number } | null };

/** The report without rows as api.md's JSON, encoded. */
export async function buildReportJson(db: Db, input: BuildInput): Promise<BuiltJson> {
  const { sums, sensor: row } = input;
  const { groupRows, order, sessions, uses } = await readSums(db, sums);
  const { groups, kE, kD } = groupsOf(groupRows, new Map(sessions.map((s) => [s.id, s.startedAt] as const)));
  const {
    failed: _failed,
    shots: _rows,
    outlier,
    ...r
  } = reportFromAggregates({ sensor: sensorSpecOf(row), rule: sums.rule, aggregates: { kE, kD, groups, order }, lastSignedOffBiasMm: input.lastBias });
  const inSelection = new Map<string, string>();
  const defaulted = new Set<string>();
  for (const g of groups) {
    inSelection.set(g.sessionId, g.sessionStartedAt);
    if (g.airDefaulted && !g.excluded) defaulted.add(g.sessionId);
  }
  const trace = traceabilityOf(row, inSelection, uses, input.tapeCerts, input.edmCerts);
  return { json: encoder.encode(JSON.stringify(toJson(sums.sensorId, sums.rule, input.ruleProjectId, r, defaulted, trace, null))), outlier };
}

/**
 * The domain's figures of one made-up group and its JSON, once, so the first real report on
 * this thread does not also compile them (measured: 20–28 ms cold, 4 ms warm).
 */
export function warmDomain() {
  const spec = { id: "warm", kind: "pulsed" as const, wavelengthNm: 905, modulationHz: [], appliesAirCorrection: true, assumedRefractivity: 0, toleranceMm: 5, tolerancePpm: 10, outdoor: true };
  const group = { sessionId: "warm", sessionStartedAt: "2026-01-01T00:00:00Z", excluded: false, reflectance: 1, illuminance: 1, rangeBand: 1 };
  const sums = { n: 3, within: 3, s1: 0, s2: 2, sq: 5, d1: 0, d2: 8, de: 1, sumD: 60, sumU2: 3, unknownU: 0, maxAbs: 2, sun: false, airDefaulted: false };
  const r = reportFromAggregates({ sensor: spec, rule: DEFAULT_RULE, aggregates: { kE: 1, kD: 20, groups: [{ ...group, ...sums }], order: { n: 3, median: 1, mad: 1, p95Abs: 2 } } });
  JSON.stringify(toJson("warm", DEFAULT_RULE, null, r, new Set(), [], null));
}
