// The report as api.md writes it (issue 16 split of reports.server.ts): the field order of the
// JSON and the traceability part (ranging.md §7).
import type { sensors } from "~/db/schema";
import { pastDueOn, type ReportShotRow, type Rule, type SensorReport } from "~/domain";
import type { CertRow } from "./report-state.server";
import type { Use } from "./report-sums.server";
import type { ReportJson, TraceabilityRow } from "~/contract/report";

// The shapes are the HTTP contract's (app/contract/report.ts): one definition for server and screens.
export type TraceabilityEntry = TraceabilityRow;
/** The report exactly as api.md lists its fields (the domain's `failed` is the tests with pass false). */
export type SensorReportJson = ReportJson;

/** The report without its per-shot rows: what GET …/report answers unless `include=shots`. */
export type SensorReportSummaryJson = Omit<SensorReportJson, "shots">;

export function toJson(
  sensorId: string,
  rule: Rule,
  ruleProjectId: string | null,
  r: Omit<SensorReport, "shots" | "failed">,
  defaulted: Set<string>,
  traceability: TraceabilityEntry[],
  rows: ReportShotRow[] | null,
): SensorReportSummaryJson & { shots?: ReportShotRow[] } {
  // api.md's field order
  return {
    sensorId,
    rule: {
      minShots: rule.minShots,
      coverageK: rule.coverageK,
      minWithinPct: rule.minWithinPct,
      referenceRatio: rule.referenceRatio ?? 2,
      referenceInVerdict: rule.referenceInVerdict ?? false,
      statement: rule.statement ?? "rmse",
      edmUncertaintyMm: rule.edmUncertaintyMm ?? null,
      edmUncertaintyPpm: rule.edmUncertaintyPpm ?? null,
    },
    ruleProjectId,
    n: r.n,
    excluded: r.excluded,
    biasMm: r.biasMm,
    biasCi95Mm: r.biasCi95Mm,
    sdMm: r.sdMm,
    rmseMm: r.rmseMm,
    accuracy95Mm: r.accuracy95Mm,
    p95AbsMm: r.p95AbsMm,
    maxAbsMm: r.maxAbsMm,
    withinPct: r.withinPct,
    zeroOffsetMm: r.zeroOffsetMm,
    zeroOffsetSeMm: r.zeroOffsetSeMm,
    scalePpm: r.scalePpm,
    scaleSePpm: r.scaleSePpm,
    // ranging.md §7 (issue 15)
    zeroOffsetT: r.zeroOffsetT,
    zeroOffsetSignificant: r.zeroOffsetSignificant,
    referenceRmseMm: r.referenceRmseMm,
    referenceUnknownN: r.referenceUnknownN,
    rmseCombinedMm: r.rmseCombinedMm,
    statement: r.statement,
    tests: r.tests,
    verdict: r.verdict,
    byReflectance: r.byReflectance,
    byIlluminance: r.byIlluminance,
    byRange: r.byRange,
    rSquared: r.rSquared,
    airDefaulted: r.drift.map((d) => d.sessionId).filter((id) => defaulted.has(id)),
    coverage: r.coverage,
    drift: r.drift,
    traceability,
    ...(rows ? { shots: rows } : {}),
  };
}

/**
 * ranging.md §7 traceability: the sensor when it has a certificate; each tape or reference EDM
 * any shot of the selection used, with the sessions whose own date was after its due date.
 * `startedAt`: every session of the selection (excluded shots too).
 */
export function traceabilityOf(sensor: typeof sensors.$inferSelect, startedAt: Map<string, string>, uses: Use[], tapeCerts: CertRow[], edmCerts: CertRow[]): TraceabilityEntry[] {
  const expired = (due: string | null, ids: Iterable<string>) => [...ids].filter((id) => pastDueOn(due, startedAt.get(id) ?? "")).sort((a, b) => (startedAt.get(a)! < startedAt.get(b)! ? -1 : 1));
  const out: TraceabilityEntry[] = [];
  if (sensor.certNumber || sensor.certDue) {
    out.push({
      kind: "sensor",
      id: sensor.id,
      label: sensor.label,
      number: sensor.certNumber,
      laboratory: sensor.certLaboratory,
      issued: sensor.certIssued,
      due: sensor.certDue,
      expiredOnSessions: expired(sensor.certDue, startedAt.keys()),
    });
  }
  const used = { tape: new Map<string, Set<string>>(), edm: new Map<string, Set<string>>() };
  for (const u of uses) {
    for (const [kind, id] of [
      ["tape", u.tapeId],
      ["edm", u.edmId],
    ] as const) {
      if (!id) continue;
      if (!used[kind].has(id)) used[kind].set(id, new Set());
      used[kind].get(id)!.add(u.sessionId);
    }
  }
  for (const [kind, certs] of [
    ["tape", tapeCerts],
    ["edm", edmCerts],
  ] as const) {
    const byId = new Map(certs.map((c) => [c.id, c]));
    for (const [id, sessionsUsed] of [...used[kind]].sort(([a], [b]) => (a < b ? -1 : 1))) {
      const c = byId.get(id);
      out.push({
        kind,
        id,
        label: c?.label ?? id,
        number: c?.number ?? null,
        laboratory: c?.laboratory ?? null,
        issued: c?.issued ?? null,
        due: c?.due ?? null,
        expiredOnSessions: expired(c?.due ?? null, sessionsUsed),
      });
    }
  }
  return out;
}
