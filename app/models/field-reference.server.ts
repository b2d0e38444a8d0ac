// The reference data a tablet copies before going into the field: active sensors, sites with
// their stations and targets, tapes, projects with their acceptance rules, and who is asking.
import { and, isNull } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { edms, projectEdms, projectSensors, projectSites, projectTapes, projects, sensors, sites, stations, tapes, targets } from "~/db/schema";
import { ruleOf, RULE_COLUMNS } from "~/models/registry-context.server";
import type { SessionUser } from "~/auth/guards.server";
import { edmListedInScope, projectColInScope, scopeOf, sensorListedInScope, siteListedInScope, tapeListedInScope } from "~/models/scope.server";
import type { FieldReference } from "~/offline/types";
import { openReshootsFor } from "~/models/reshoots.server";

const point = (r: { gridE: number | null; gridN: number | null; gridH: number | null; lat: number | null; lon: number | null; h: number | null }) => ({
  grid: r.gridE != null && r.gridN != null ? { e: r.gridE, n: r.gridN, h: r.gridH ?? 0 } : null,
  geo: r.lat != null && r.lon != null ? { lat: r.lat, lon: r.lon, h: r.h ?? 0 } : null,
});

/**
 * issue 14: a tablet copies only its user's projects — their live projects, the sensors, sites,
 * tapes and reference EDMs those list (with the sites' stations and targets), and per project
 * which of them it lists, so the shot form offers a session only its project's tapes and EDMs.
 * Admins get everything.
 */
export async function fieldReference(user: SessionUser): Promise<FieldReference> {
  const db = getDb();
  // issue 12: open re-shoot requests travel with the reference data, scoped like the rest
  const reshootsP = openReshootsFor(user);
  const scope = await scopeOf(user, db);
  const [sensorRows, siteRows, stationRows, targetRows, tapeRows, projectRows, ps, pSites, edmRows, pTapes, pEdms] = await Promise.all([
    db
      .select({
        id: sensors.id,
        label: sensors.label,
        serial: sensors.serial,
        kind: sensors.kind,
        wavelengthNm: sensors.wavelengthNm,
        modulationHz: sensors.modulationHz,
        appliesAirCorrection: sensors.appliesAirCorrection,
        assumedRefractivity: sensors.assumedRefractivity,
        toleranceMm: sensors.toleranceMm,
        tolerancePpm: sensors.tolerancePpm,
        outdoor: sensors.outdoor,
        calibrationDue: sensors.calibrationDue,
        laserClass: sensors.laserClass,
        certNumber: sensors.certNumber,
        certDue: sensors.certDue,
      })
      .from(sensors)
      .where(and(isNull(sensors.retiredAt), sensorListedInScope(scope, sensors.id))),
    db
      .select({ id: sites.id, name: sites.name, lat: sites.lat, lon: sites.lon })
      .from(sites)
      .where(and(isNull(sites.retiredAt), siteListedInScope(scope, sites.id))),
    db
      .select({
        id: stations.id,
        siteId: stations.siteId,
        label: stations.label,
        gridE: stations.gridE,
        gridN: stations.gridN,
        gridH: stations.gridH,
        lat: stations.lat,
        lon: stations.lon,
        h: stations.h,
      })
      .from(stations)
      .where(and(isNull(stations.retiredAt), siteListedInScope(scope, stations.siteId))),
    db
      .select({
        id: targets.id,
        siteId: targets.siteId,
        label: targets.label,
        reflectancePct: targets.reflectancePct,
        retro: targets.retro,
        referenceM: targets.referenceM,
        gridE: targets.gridE,
        gridN: targets.gridN,
        gridH: targets.gridH,
        lat: targets.lat,
        lon: targets.lon,
        h: targets.h,
      })
      .from(targets)
      .where(and(isNull(targets.retiredAt), siteListedInScope(scope, targets.siteId))),
    db
      .select({
        id: tapes.id,
        label: tapes.label,
        standardTempC: tapes.standardTempC,
        standardTensionN: tapes.standardTensionN,
        areaMm2: tapes.areaMm2,
        modulusGPa: tapes.modulusGPa,
        weightNPerM: tapes.weightNPerM,
        calibrationPpm: tapes.calibrationPpm,
        uncertaintyMm: tapes.uncertaintyMm,
        uncertaintyPpm: tapes.uncertaintyPpm,
        certNumber: tapes.certNumber,
        certDue: tapes.certDue,
      })
      .from(tapes)
      .where(and(isNull(tapes.retiredAt), tapeListedInScope(scope, tapes.id))),
    db
      .select({
        id: projects.id,
        name: projects.name,
        client: projects.client,
        ...RULE_COLUMNS,
      })
      .from(projects)
      .where(and(isNull(projects.retiredAt), projectColInScope(scope, projects.id))),
    db.select({ projectId: projectSensors.projectId, sensorId: projectSensors.sensorId }).from(projectSensors).where(projectColInScope(scope, projectSensors.projectId)),
    db.select({ projectId: projectSites.projectId, siteId: projectSites.siteId }).from(projectSites).where(projectColInScope(scope, projectSites.projectId)),
    db
      .select({ id: edms.id, label: edms.label, serial: edms.serial, uncertaintyMm: edms.uncertaintyMm, uncertaintyPpm: edms.uncertaintyPpm, certNumber: edms.certNumber, certDue: edms.certDue })
      .from(edms)
      .where(and(isNull(edms.retiredAt), edmListedInScope(scope, edms.id))),
    db.select({ projectId: projectTapes.projectId, tapeId: projectTapes.tapeId }).from(projectTapes).where(projectColInScope(scope, projectTapes.projectId)),
    db.select({ projectId: projectEdms.projectId, edmId: projectEdms.edmId }).from(projectEdms).where(projectColInScope(scope, projectEdms.projectId)),
  ]);

  return {
    user: { id: user.id, email: user.email, name: user.name, role: user.role },
    sensors: sensorRows.map((s) => ({ ...s, modulationHz: s.modulationHz ?? [] })),
    sites: siteRows.map((s) => ({
      ...s,
      stations: stationRows.filter((r) => r.siteId === s.id).map((r) => ({ id: r.id, label: r.label, ...point(r) })),
      targets: targetRows.filter((r) => r.siteId === s.id).map((r) => ({ id: r.id, label: r.label, reflectancePct: r.reflectancePct, retro: r.retro, referenceM: r.referenceM, ...point(r) })),
    })),
    tapes: tapeRows,
    projects: projectRows.map((p) => ({
      id: p.id,
      name: p.name,
      client: p.client,
      rule: ruleOf(p),
      sensorIds: ps.filter((x) => x.projectId === p.id).map((x) => x.sensorId),
      siteIds: pSites.filter((x) => x.projectId === p.id).map((x) => x.siteId),
      tapeIds: pTapes.filter((x) => x.projectId === p.id).map((x) => x.tapeId),
      edmIds: pEdms.filter((x) => x.projectId === p.id).map((x) => x.edmId),
    })),
    edms: edmRows,
    reshoots: await reshootsP,
    copiedAt: new Date().toISOString(),
  };
}
