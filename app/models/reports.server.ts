// Sensor reports (api.md GET /api/sensors/:sensorId/report) and the sensor overview: the stored
// computed shots of a selection through the domain's sensorReport, with the rule of the chosen
// project (it recomputes each shot's limit and within with that rule's coverage factor).
import { and, asc, desc, eq, inArray, isNull, sql } from "drizzle-orm";
import { getDb, type Db } from "~/db/client.server";
import { checkSessions, projects, projectSensors, sensors, shots, signOffs, targets } from "~/db/schema";
import { DEFAULT_RULE, sensorReport, type ReportShot, type Rule, type SensorReport } from "~/domain";
import { periodDay, periodWhere, ruleOf, sensorSpecOf, type Actor, type QueryError } from "./shots.server";
import type { RecordError } from "./sync-schemas";

export type ReportQuery = { from?: string; to?: string; sessionIds?: string[]; projectId?: string };

/** The report exactly as api.md lists its fields (the domain's `failed` is the tests with pass false). */
export type SensorReportJson = { sensorId: string; rule: { minShots: number; coverageK: number; minWithinPct: number } } & Omit<
  SensorReport,
  "failed"
> & { airDefaulted: string[] };

export type SensorSummary = {
  id: string;
  label: string;
  kind: "pulsed" | "cw";
  verdict: SensorReport["verdict"];
  n: number;
  biasMm: number | null;
  rmseMm: number | null;
  lastShotAt: string | null;
};

/** from, to (YYYY-MM-DD), session (repeatable), project of GET …/report and …/report.csv. */
export function parseReportQuery(params: URLSearchParams): ReportQuery | QueryError {
  const errors: RecordError[] = [];
  const out: ReportQuery = {};
  for (const key of ["from", "to"] as const) {
    const v = params.get(key);
    if (!v) continue;
    if (periodDay(v)) out[key] = v;
    else errors.push({ path: key, message: `${key} must be a date (YYYY-MM-DD)` });
  }
  if (out.from && out.to && periodDay(out.from)! > periodDay(out.to)!) errors.push({ path: "to", message: "to must not come before from" });
  const sessions = params.getAll("session").filter(Boolean);
  if (sessions.length) out.sessionIds = sessions;
  const project = params.get("project");
  if (project) out.projectId = project;
  return errors.length ? { status: 400, body: { error: "Invalid query.", errors } } : out;
}

/**
 * The rule of a report: the chosen project's; without one, the project's when the sensor
 * belongs to exactly one live project, else the default rule of ranging.md §6.
 */
async function ruleForReport(sensorId: string, projectId: string | undefined, db: Db): Promise<{ rule: Rule } | QueryError> {
  const cols = { minShots: projects.minShots, coverageK: projects.coverageK, minWithinPct: projects.minWithinPct, rangeBandEdgesM: projects.rangeBandEdgesM };
  if (projectId) {
    const [p] = await db.select(cols).from(projects).where(eq(projects.id, projectId));
    if (!p) return { status: 404, body: { error: `No project ${projectId}.` } };
    return { rule: ruleOf(p) };
  }
  const rows = await db
    .select(cols)
    .from(projectSensors)
    .innerJoin(projects, eq(projects.id, projectSensors.projectId))
    .where(and(eq(projectSensors.sensorId, sensorId), isNull(projects.retiredAt)))
    .limit(2);
  return { rule: rows.length === 1 ? ruleOf(rows[0]!) : DEFAULT_RULE };
}

type LoadedShot = ReportShot & { note?: string | null; targetLabel?: string | null };

const reportColumns = {
  id: shots.id,
  takenAt: shots.takenAt,
  sessionId: shots.sessionId,
  sessionStartedAt: checkSessions.startedAt,
  referenceM: shots.referenceM,
  rangeM: shots.rangeM,
  errorMm: shots.errorMm,
  repeatabilityMm: shots.repeatabilityMm,
  reflectancePct: shots.reflectancePct,
  retro: shots.retro,
  illuminanceKlux: shots.illuminanceKlux,
  excluded: shots.excluded,
  wrap: shots.wrap,
  airDefaulted: shots.airDefaulted,
};

/**
 * The same columns packed into ONE text value for the whole selection, a JSON array of arrays:
 * the local client builds a JS object per row and per column (defineProperty), which for
 * 100 000 shots costs seconds; one value and JSON.parse cost a fraction. %!.17g writes each
 * double with 17 significant digits so it reads back bit for bit (SQLite's own JSON and CAST
 * round to 15). Ids are UUIDs and times ISO 8601 (validated at sync): nothing to escape.
 */
const packedRow = sql`'["' || ${shots.id} || '","' || ${shots.takenAt} || '","' || ${shots.sessionId} || '","' || ${checkSessions.startedAt} || '",' ||
  printf('%!.17g,%!.17g,%!.17g,', ${shots.referenceM}, ${shots.rangeM}, ${shots.errorMm}) ||
  CASE WHEN ${shots.repeatabilityMm} IS NULL THEN 'null' ELSE printf('%!.17g', ${shots.repeatabilityMm}) END || ',' ||
  printf('%!.17g,', ${shots.reflectancePct}) ||
  CASE WHEN ${shots.illuminanceKlux} IS NULL THEN 'null' ELSE printf('%!.17g', ${shots.illuminanceKlux}) END || ',' ||
  (${shots.retro} + 2 * ${shots.excluded} + 4 * ${shots.wrap} + 8 * ${shots.airDefaulted}) || ']'`;
const SAFE = /^[0-9A-Za-z:+.\-]*$/;

type Packed = [string, string, string, string, number, number, number, number | null, number, number | null, number];

function unpack(text: string): ReportShot[] | null {
  let rows: Packed[];
  try {
    rows = JSON.parse(`[${text}]`) as Packed[];
  } catch {
    return null;
  }
  const out: ReportShot[] = new Array(rows.length);
  for (let i = 0; i < rows.length; i++) {
    const f = rows[i]!;
    if (!SAFE.test(f[0]) || !SAFE.test(f[2])) return null;
    const bits = f[10];
    out[i] = {
      id: f[0],
      takenAt: f[1],
      sessionId: f[2],
      sessionStartedAt: f[3],
      referenceM: f[4],
      rangeM: f[5],
      errorMm: f[6],
      repeatabilityMm: f[7],
      reflectancePct: f[8],
      illuminanceKlux: f[9],
      retro: (bits & 1) !== 0,
      excluded: (bits & 2) !== 0,
      wrap: (bits & 4) !== 0,
      airDefaulted: (bits & 8) !== 0,
    };
  }
  return out;
}

const byTimeThenId = (a: ReportShot, b: ReportShot) => (a.takenAt < b.takenAt ? -1 : a.takenAt > b.takenAt ? 1 : a.id < b.id ? -1 : a.id > b.id ? 1 : 0);

/**
 * (takenAt, id) order, as the plain query and /api/shots give it. The packed rows come in
 * takenAt order (SQLite keeps a subquery's order through group_concat in practice, though it
 * does not promise it): ties are put in id order here, and any other disorder gets a full sort.
 */
function inTimeOrder(list: ReportShot[]): ReportShot[] {
  for (let i = 1; i < list.length; i++) {
    if (list[i - 1]!.takenAt > list[i]!.takenAt) return list.sort(byTimeThenId);
  }
  for (let i = 0; i < list.length; ) {
    let j = i + 1;
    while (j < list.length && list[j]!.takenAt === list[i]!.takenAt) j++;
    if (j - i > 1) {
      const run = list.slice(i, j).sort(byTimeThenId);
      for (let k = 0; k < run.length; k++) list[i + k] = run[k]!;
    }
    i = j;
  }
  return list;
}

/** The selection's shots, one query, in time order (takenAt, then id). */
export async function loadReportShots(sensorId: string, q: ReportQuery, opts: { details?: boolean } = {}, db: Db = getDb()): Promise<LoadedShot[]> {
  const where = [eq(shots.sensorId, sensorId), ...periodWhere(q.from, q.to)];
  if (q.sessionIds?.length) where.push(inArray(shots.sessionId, q.sessionIds));
  if (!opts.details) {
    // the index (sensor_id, taken_at) gives the order, so SQLite never sorts 100 000 long strings
    const ordered = db
      .select({ r: sql<string>`${packedRow}`.as("r") })
      .from(shots)
      .innerJoin(checkSessions, eq(checkSessions.id, shots.sessionId))
      .where(and(...where))
      .orderBy(asc(shots.takenAt))
      .as("ordered");
    const [row] = await db.select({ packed: sql<string | null>`group_concat(${ordered.r}, ',')` }).from(ordered);
    const list = unpack(row?.packed ?? "");
    if (list) return inTimeOrder(list);
    // a field needed escaping (not possible for synced records): the plain query
  }
  return db
    .select({ ...reportColumns, note: shots.note, targetLabel: targets.label })
    .from(shots)
    .innerJoin(checkSessions, eq(checkSessions.id, shots.sessionId))
    .leftJoin(targets, eq(targets.id, shots.targetId))
    .where(and(...where))
    .orderBy(asc(shots.takenAt), asc(shots.id));
}

async function lastApprovedBias(sensorId: string, db: Db): Promise<number | null> {
  const [row] = await db
    .select({ biasMm: signOffs.biasMm })
    .from(signOffs)
    .where(and(eq(signOffs.sensorId, sensorId), eq(signOffs.decision, "approved")))
    .orderBy(desc(signOffs.createdAt))
    .limit(1);
  return row?.biasMm ?? null;
}

function toJson(sensorId: string, rule: Rule, r: SensorReport, shotsIn: ReportShot[]): SensorReportJson {
  const defaulted = new Set<string>();
  for (const s of shotsIn) if (s.airDefaulted && !s.excluded) defaulted.add(s.sessionId);
  // api.md's field order
  return {
    sensorId,
    rule: { minShots: rule.minShots, coverageK: rule.coverageK, minWithinPct: rule.minWithinPct },
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
    tests: r.tests,
    verdict: r.verdict,
    byReflectance: r.byReflectance,
    byIlluminance: r.byIlluminance,
    byRange: r.byRange,
    rSquared: r.rSquared,
    airDefaulted: r.drift.map((d) => d.sessionId).filter((id) => defaulted.has(id)),
    coverage: r.coverage,
    drift: r.drift,
    shots: r.shots,
  };
}

type Built = { status: 200; body: SensorReportJson; sensor: { id: string; label: string; serial: string; kind: "pulsed" | "cw" }; rule: Rule; details: LoadedShot[] };

/** The report with what the CSV export and the screens need beside it; a refusal as a QueryError. */
export async function computeSensorReport(
  _actor: Actor,
  sensorId: string,
  query: ReportQuery | URLSearchParams,
  opts: { details?: boolean } = {},
  db: Db = getDb(),
): Promise<Built | QueryError> {
  const q = query instanceof URLSearchParams ? parseReportQuery(query) : query;
  if ("status" in q) return q;
  for (const key of ["from", "to"] as const) {
    const v = q[key];
    if (v && !periodDay(v)) return { status: 400, body: { error: "Invalid query.", errors: [{ path: key, message: `${key} must be a date (YYYY-MM-DD)` }] } };
  }
  const [row] = await db.select().from(sensors).where(eq(sensors.id, sensorId));
  if (!row) return { status: 404, body: { error: `No sensor ${sensorId}.` } };
  const picked = await ruleForReport(sensorId, q.projectId, db);
  if ("status" in picked) return picked;
  const [list, lastBias] = await Promise.all([loadReportShots(sensorId, q, opts, db), lastApprovedBias(sensorId, db)]);
  const r = sensorReport({ sensor: sensorSpecOf(row), rule: picked.rule, shots: list, lastSignedOffBiasMm: lastBias });
  return {
    status: 200,
    body: toJson(sensorId, picked.rule, r, list),
    sensor: { id: row.id, label: row.label, serial: row.serial, kind: row.kind },
    rule: picked.rule,
    details: list,
  };
}

/**
 * The api.md report of a sensor for the review screens: null for an unknown sensor; an invalid
 * query or unknown project throws a JSON Response (400/404).
 */
export async function buildSensorReport(actor: Actor, sensorId: string, query: ReportQuery | URLSearchParams = {}): Promise<SensorReportJson | null> {
  const r = await computeSensorReport(actor, sensorId, query);
  if (r.status === 200) return r.body;
  if (r.status === 404 && r.body.error.startsWith("No sensor")) return null;
  throw Response.json(r.body, { status: r.status });
}

/** GET /api/sensors: every live sensor with its verdict over all its shots. */
export async function listSensorSummaries(actor: Actor, query: { projectId?: string } | URLSearchParams = {}, db: Db = getDb()): Promise<{ status: 200; body: { sensors: SensorSummary[] } } | QueryError> {
  const projectId = query instanceof URLSearchParams ? (query.get("project") ?? undefined) : query.projectId;
  let rows = await db.select().from(sensors).where(isNull(sensors.retiredAt)).orderBy(asc(sensors.label), asc(sensors.id));
  if (projectId) {
    const [p] = await db.select({ id: projects.id }).from(projects).where(eq(projects.id, projectId));
    if (!p) return { status: 404, body: { error: `No project ${projectId}.` } };
    const members = new Set((await db.select({ id: projectSensors.sensorId }).from(projectSensors).where(eq(projectSensors.projectId, projectId))).map((m) => m.id));
    rows = rows.filter((r) => members.has(r.id));
  }
  const out: SensorSummary[] = [];
  for (const row of rows) {
    const picked = await ruleForReport(row.id, projectId, db);
    if ("status" in picked) return picked;
    const list = await loadReportShots(row.id, {}, {}, db);
    const r = sensorReport({ sensor: sensorSpecOf(row), rule: picked.rule, shots: list });
    let last: string | null = null;
    let lastT = -Infinity;
    for (const s of list) {
      const t = Date.parse(s.takenAt);
      if (t > lastT) {
        lastT = t;
        last = s.takenAt;
      }
    }
    out.push({ id: row.id, label: row.label, kind: row.kind, verdict: r.verdict, n: r.n, biasMm: r.biasMm, rmseMm: r.rmseMm, lastShotAt: last });
  }
  return { status: 200, body: { sensors: out } };
}
