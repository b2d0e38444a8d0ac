// The registry data a shot's computation needs (sensors, sites' stations and targets, tapes,
// EDMs, projects' acceptance rules), loaded once per request or per recompute in one batch; and
// the project a (sensor, site) pair implies. Shared by the sync ingest, the scan import and the
// recomputation (issue 13: split out of shots.server.ts).
import { and, eq, inArray, or, sql, type SQL } from "drizzle-orm";
import type { SQLiteColumn } from "drizzle-orm/sqlite-core";
import { getDb, type Db } from "~/db/client.server";
import { checkSessions, edms, projects, projectSensors, projectSites, sensors, sites, stations, tapes, targets } from "~/db/schema";
import { DEFAULT_RULE, type AirInput, type LinearUncertainty, type Position, type Rule, type SensorSpec, type TapeSpec } from "~/domain";

// ---------------------------------------------------------------------------------------------
// Registry data a computation needs, loaded once per request (or per recompute).

export type SensorEntry = SensorSpec & { label: string; retiredAt: string | null };
export type PlaceEntry = { siteId: string; position: Position; sigmaMm?: number | null };
/** A tape's constants and its certificate's uncertainty (issue 15). */
export type TapeEntry = TapeSpec & LinearUncertainty;
export type TargetEntry = PlaceEntry & { retro: boolean };

export type RegistryContext = {
  sensors: Map<string, SensorEntry>;
  sites: Set<string>;
  tapes: Map<string, TapeEntry>;
  stations: Map<string, PlaceEntry>;
  targets: Map<string, TargetEntry>;
  rules: Map<string, Rule>;
  /** issue 15: the reference EDMs (a small registry, read whole) */
  edms: Map<string, LinearUncertainty>;
};

/** What a shot takes from its session. */
export type SessionFacts = { id: string; sensorId: string; siteId: string; projectId: string | null; air: AirInput };

type Need = {
  sensorIds: Iterable<string>;
  siteIds: Iterable<string>;
  tapeIds: Iterable<string>;
  projectIds: Iterable<string>;
  /** Stored sessions whose sensor, site and project are needed too (read in the same query). */
  sessionIds?: Iterable<string>;
  /** Sensors whose projects' rules are needed too (a session's project may be implied). */
  projectsOfSensorIds?: Iterable<string>;
};

const uniq = (xs: Iterable<string>) => [...new Set(xs)].filter(Boolean);

/**
 * `col IN (ids)` with the ids as ONE JSON parameter: the same rows as drizzle's inArray, whose
 * SQL for 500 ids (a placeholder and a bound value each) costs more to build, bind and prepare
 * than the lookup itself.
 */
export function inIds(col: SQLiteColumn, ids: readonly string[]): SQL {
  return ids.length ? sql`${col} IN (SELECT value FROM json_each(${JSON.stringify(ids)}))` : sql`0`;
}

function positionOf(r: { gridE: number | null; gridN: number | null; gridH: number | null; lat: number | null; lon: number | null; h: number | null }): Position {
  return {
    grid: r.gridE != null && r.gridN != null && r.gridH != null ? { e: r.gridE, n: r.gridN, h: r.gridH } : null,
    geo: r.lat != null && r.lon != null && r.h != null ? { lat: r.lat, lon: r.lon, h: r.h } : null,
  };
}

export function sensorSpecOf(r: typeof sensors.$inferSelect): SensorEntry {
  return {
    id: r.id,
    label: r.label,
    kind: r.kind,
    wavelengthNm: r.wavelengthNm,
    modulationHz: r.modulationHz ?? [],
    appliesAirCorrection: r.appliesAirCorrection,
    assumedRefractivity: r.assumedRefractivity,
    toleranceMm: r.toleranceMm,
    tolerancePpm: r.tolerancePpm,
    outdoor: r.outdoor,
    retiredAt: r.retiredAt,
  };
}

type RuleRow = {
  minShots: number;
  coverageK: number;
  minWithinPct: number;
  rangeBandEdgesM: number[] | null;
  // issue 15 (ranging.md §7); optional so older callers still fit
  referenceRatio?: number | null;
  referenceInVerdict?: boolean | null;
  statement?: "rmse" | "nssda95" | null;
  edmUncertaintyMm?: number | null;
  edmUncertaintyPpm?: number | null;
};

export function ruleOf(p: RuleRow): Rule {
  return {
    minShots: p.minShots,
    coverageK: p.coverageK,
    minWithinPct: p.minWithinPct,
    rangeBandEdgesM: p.rangeBandEdgesM && p.rangeBandEdgesM.length ? [...p.rangeBandEdgesM] : [...DEFAULT_RULE.rangeBandEdgesM],
    referenceRatio: p.referenceRatio ?? 2,
    referenceInVerdict: p.referenceInVerdict ?? false,
    statement: p.statement ?? "rmse",
    edmUncertaintyMm: p.edmUncertaintyMm ?? null,
    edmUncertaintyPpm: p.edmUncertaintyPpm ?? null,
  };
}

/** The project columns of its acceptance rule (ranging.md §6–7). */
export const RULE_COLUMNS = {
  minShots: projects.minShots,
  coverageK: projects.coverageK,
  minWithinPct: projects.minWithinPct,
  rangeBandEdgesM: projects.rangeBandEdgesM,
  referenceRatio: projects.referenceRatio,
  referenceInVerdict: projects.referenceInVerdict,
  statement: projects.statement,
  edmUncertaintyMm: projects.edmUncertaintyMm,
  edmUncertaintyPpm: projects.edmUncertaintyPpm,
};

/** The queries of a registry context, to run in one batch (one transaction, one round trip). */
export function registryQueries(need: Need, db: Db = getDb()) {
  const sensorIds = uniq(need.sensorIds);
  const siteIds = uniq(need.siteIds);
  const tapeIds = uniq(need.tapeIds);
  const projectIds = uniq(need.projectIds);
  const sessionIds = uniq(need.sessionIds ?? []);
  const ofSensors = uniq(need.projectsOfSensorIds ?? []);
  const ofSessions = (col: SQLiteColumn) => db.select({ id: col }).from(checkSessions).where(inIds(checkSessions.id, sessionIds));
  const anyOf = (col: SQLiteColumn, ids: string[], stored: SQLiteColumn) => (sessionIds.length ? or(inArray(col, ids), inArray(col, ofSessions(stored)))! : inArray(col, ids));
  const sitesWhere = (col: SQLiteColumn) => anyOf(col, siteIds, checkSessions.siteId);
  return [
    db
      .select()
      .from(sensors)
      .where(anyOf(sensors.id, sensorIds, checkSessions.sensorId)),
    db
      .select({ id: sites.id })
      .from(sites)
      .where(anyOf(sites.id, siteIds, checkSessions.siteId)),
    db
      .select({
        id: tapes.id,
        standardTempC: tapes.standardTempC,
        standardTensionN: tapes.standardTensionN,
        areaMm2: tapes.areaMm2,
        modulusGPa: tapes.modulusGPa,
        weightNPerM: tapes.weightNPerM,
        calibrationPpm: tapes.calibrationPpm,
        uncertaintyMm: tapes.uncertaintyMm,
        uncertaintyPpm: tapes.uncertaintyPpm,
      })
      .from(tapes)
      .where(inArray(tapes.id, tapeIds)),
    db
      .select({
        id: stations.id,
        siteId: stations.siteId,
        gridE: stations.gridE,
        gridN: stations.gridN,
        gridH: stations.gridH,
        lat: stations.lat,
        lon: stations.lon,
        h: stations.h,
        sigmaMm: stations.sigmaMm,
      })
      .from(stations)
      .where(sitesWhere(stations.siteId)),
    db
      .select({
        id: targets.id,
        siteId: targets.siteId,
        retro: targets.retro,
        gridE: targets.gridE,
        gridN: targets.gridN,
        gridH: targets.gridH,
        lat: targets.lat,
        lon: targets.lon,
        h: targets.h,
        sigmaMm: targets.sigmaMm,
      })
      .from(targets)
      .where(sitesWhere(targets.siteId)),
    db
      .select({ id: projects.id, ...RULE_COLUMNS })
      .from(projects)
      .where(
        or(
          inArray(projects.id, projectIds),
          sessionIds.length ? inArray(projects.id, ofSessions(checkSessions.projectId)) : undefined,
          ofSensors.length ? inArray(projects.id, db.select({ id: projectSensors.projectId }).from(projectSensors).where(inArray(projectSensors.sensorId, ofSensors))) : undefined,
        ),
      ),
    db.select({ id: edms.id, uncertaintyMm: edms.uncertaintyMm, uncertaintyPpm: edms.uncertaintyPpm }).from(edms),
  ] as const;
}

const registryBatch = (need: Need, db: Db) => db.batch(registryQueries(need, db));
type RegistryRows = Awaited<ReturnType<typeof registryBatch>>;

export function registryContextOf([sensorRows, siteRows, tapeRows, stationRows, targetRows, projectRows, edmRows]: RegistryRows): RegistryContext {
  return {
    sensors: new Map(sensorRows.map((r) => [r.id, sensorSpecOf(r)])),
    sites: new Set(siteRows.map((r) => r.id)),
    tapes: new Map(tapeRows.map(({ id, ...t }) => [id, t])),
    stations: new Map(stationRows.map((r) => [r.id, { siteId: r.siteId, position: positionOf(r), sigmaMm: r.sigmaMm }])),
    targets: new Map(targetRows.map((r) => [r.id, { siteId: r.siteId, retro: r.retro, position: positionOf(r), sigmaMm: r.sigmaMm }])),
    rules: new Map(projectRows.map(({ id, ...r }) => [id, ruleOf(r)])),
    edms: new Map(edmRows.map(({ id, ...e }) => [id, e])),
  };
}

export async function loadRegistryContext(need: Need, db: Db = getDb()): Promise<RegistryContext> {
  return registryContextOf(await registryBatch(need, db));
}

/** The live projects that list both a sensor and a site, for the sensors of these pairs. */
export function impliedProjectsQuery(pairs: { sensorId: string; siteId: string }[], db: Db = getDb()) {
  return db
    .select({ projectId: projectSensors.projectId, sensorId: projectSensors.sensorId, siteId: projectSites.siteId })
    .from(projectSensors)
    .innerJoin(projectSites, eq(projectSites.projectId, projectSensors.projectId))
    .innerJoin(projects, eq(projects.id, projectSensors.projectId))
    .where(and(inArray(projectSensors.sensorId, uniq(pairs.map((p) => p.sensorId))), sql`${projects.retiredAt} is null`));
}

/** issue 14: every project (retired ones too) listing both a sensor and a site, for the sensors of these pairs. */
export function holdingProjectsQuery(pairs: { sensorId: string; siteId: string }[], db: Db = getDb()) {
  return db
    .select({ projectId: projectSensors.projectId, sensorId: projectSensors.sensorId, siteId: projectSites.siteId, name: projects.name, retiredAt: projects.retiredAt })
    .from(projectSensors)
    .innerJoin(projectSites, eq(projectSites.projectId, projectSensors.projectId))
    .innerJoin(projects, eq(projects.id, projectSensors.projectId))
    .where(inIds(projectSensors.sensorId, uniq(pairs.map((p) => p.sensorId))));
}

/** The one non-retired project that lists both the sensor and the site, per (sensor, site) pair. */
export function impliedProjectsOf(rows: { projectId: string; sensorId: string; siteId: string }[]): Map<string, string> {
  const out = new Map<string, string>();
  const found = new Map<string, Set<string>>();
  for (const r of rows) {
    const k = pairKey(r.sensorId, r.siteId);
    if (!found.has(k)) found.set(k, new Set());
    found.get(k)!.add(r.projectId);
  }
  for (const [k, ids] of found) if (ids.size === 1) out.set(k, [...ids][0]!);
  return out;
}

export async function impliedProjects(pairs: { sensorId: string; siteId: string }[], db: Db = getDb()): Promise<Map<string, string>> {
  if (!pairs.length) return new Map();
  return impliedProjectsOf(await impliedProjectsQuery(pairs, db));
}
export const pairKey = (sensorId: string, siteId: string) => `${sensorId}\u0000${siteId}`;
