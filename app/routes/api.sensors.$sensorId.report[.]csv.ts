// GET /api/sensors/:sensorId/report.csv (any signed-in role): the report's shot table as CSV
// (row 1 names, row 2 units); ?part=summary gives the figures and tests instead. Same query
// as the JSON report.
import Papa from "papaparse";
import { requireApiUser } from "~/auth/guards.server";
import { computeSensorReport, sensorRowsStream } from "~/models/reports.server";
import type { LoadedShot } from "~/models/report-rows.server";
import type { ReportShotRow } from "~/domain";
import type { Route } from "./+types/api.sensors.$sensorId.report[.]csv";

type Cell = string | number | boolean | null;

/** One row per shot; the second row gives each column's unit. */
const SHOT_COLUMNS: [name: string, unit: string][] = [
  ["shotId", ""],
  ["takenAt", "ISO 8601"],
  ["sessionId", ""],
  ["target", ""],
  ["referenceM", "m"],
  ["rangeM", "m"],
  ["errorMm", "mm"],
  ["limitMm", "mm"],
  ["within", "yes/no"],
  ["repeatabilityMm", "mm"],
  ["reflectancePct", "%"],
  ["illuminanceKlux", "klux"],
  ["excluded", "yes/no"],
  ["flags", ""],
  ["note", ""],
];

const yesNo = (b: boolean) => (b ? "yes" : "no");

function csv(rows: Cell[][]) {
  // escapeFormulae prefixes ' to TEXT cells starting with = + - @ tab or CR (spreadsheet
  // formula injection); numbers are left alone, so a negative error stays a number.
  return Papa.unparse(rows, { escapeFormulae: true, newline: "\r\n" });
}

/** A shot's CSV row. */
const shotRow = (s: ReportShotRow, d: LoadedShot): Cell[] => [
  s.id,
  s.takenAt,
  s.sessionId,
  d.targetLabel ?? "",
  s.referenceM,
  s.rangeM,
  s.errorMm,
  s.limitMm,
  yesNo(s.within),
  s.repeatabilityMm,
  d.reflectancePct,
  d.illuminanceKlux,
  yesNo(s.excluded),
  s.flags.join(" "),
  d.note ?? "",
];

const fileName = (sensor: { id: string; label: string }, part: string) => `report-${sensor.label.replace(/[^A-Za-z0-9._-]+/g, "-").replace(/^-+|-+$/g, "") || sensor.id}-${part}.csv`;
const headersOf = (name: string) => ({
  "Content-Type": "text/csv; charset=utf-8",
  "Content-Disposition": `attachment; filename="${name}"`,
  "Cache-Control": "private, no-store",
});

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireApiUser(request);
  const url = new URL(request.url);
  if (url.searchParams.get("part") !== "summary") {
    // the shot table streamed page by page (issue 16, decision 0013): the same bytes at any n, one page in memory
    const streamed = await sensorRowsStream(user, params.sensorId, url.searchParams, {
      head: csv([SHOT_COLUMNS.map((c) => c[0]), SHOT_COLUMNS.map((c) => c[1])]) + "\r\n",
      page: (rows, shots) => csv(rows.map((s, i) => shotRow(s, shots[i]!))) + "\r\n",
    });
    if (streamed.status !== 200) return Response.json(streamed.body, { status: streamed.status });
    if (streamed.stream) return new Response(streamed.stream, { headers: headersOf(fileName(streamed.sensor, "shots")) });
    // the shots changed between the figures and the rows' snapshot: built from the shots in memory below
  }
  const result = await computeSensorReport(user, params.sensorId, url.searchParams, { details: true });
  if (result.status !== 200) return Response.json(result.body, { status: result.status });
  const r = result.body;
  let rows: Cell[][];
  if (url.searchParams.get("part") === "summary") {
    rows = [
      ["figure", "value", "limit", "pass", "unit"],
      ["sensor", result.sensor.label, null, null, ""],
      ["serial", result.sensor.serial, null, null, ""],
      ["verdict", r.verdict, null, null, ""],
      ["n", r.n, null, null, "shots"],
      ["excluded", r.excluded, null, null, "shots"],
      ["biasMm", r.biasMm, null, null, "mm"],
      ["biasCi95LowMm", r.biasCi95Mm?.[0] ?? null, null, null, "mm"],
      ["biasCi95HighMm", r.biasCi95Mm?.[1] ?? null, null, null, "mm"],
      ["sdMm", r.sdMm, null, null, "mm"],
      ["rmseMm", r.rmseMm, null, null, "mm"],
      ["accuracy95Mm", r.accuracy95Mm, null, null, "mm"],
      ["p95AbsMm", r.p95AbsMm, null, null, "mm"],
      ["maxAbsMm", r.maxAbsMm, null, null, "mm"],
      ["withinPct", r.withinPct, null, null, "%"],
      ["zeroOffsetMm", r.zeroOffsetMm, null, null, "mm"],
      ["zeroOffsetSeMm", r.zeroOffsetSeMm, null, null, "mm"],
      ["scalePpm", r.scalePpm, null, null, "ppm"],
      ["scaleSePpm", r.scaleSePpm, null, null, "ppm"],
      ["rSquared", r.rSquared, null, null, ""],
      // issue 15 (ranging.md §7)
      ["referenceRmseMm", r.referenceRmseMm, null, null, "mm"],
      ["referenceUnknownN", r.referenceUnknownN, null, null, "shots"],
      ["rmseCombinedMm", r.rmseCombinedMm, null, null, "mm"],
      ["zeroOffsetT", r.zeroOffsetT, null, null, ""],
      ["zeroOffsetSignificant", r.zeroOffsetSignificant == null ? null : yesNo(r.zeroOffsetSignificant), null, null, ""],
      ["statement", r.statement, null, null, ""],
      ...r.tests.map((t): Cell[] => [`test:${t.name}`, t.value, t.limit, t.pass == null ? "unknown" : yesNo(t.pass), t.name === "count" ? "shots" : t.name === "within" ? "%" : "mm"]),
    ];
  } else {
    rows = [SHOT_COLUMNS.map((c) => c[0]), SHOT_COLUMNS.map((c) => c[1])];
    r.shots.forEach((s, i) => rows.push(shotRow(s, result.details[i]!)));
  }
  const part = url.searchParams.get("part") === "summary" ? "summary" : "shots";
  return new Response(csv(rows) + "\r\n", { headers: headersOf(fileName(result.sensor, part)) });
}
