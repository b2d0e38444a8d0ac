// One shot: raw observation + its session + the registry → the stored computed columns.
// Pure (no database, no server state), so the sync worker threads (issue 16,
// app/models/sync.worker.ts) run it as the request's own thread does; shots.server.ts
// re-exports it for everything else. The record → domain mapping itself is the contract's.
import { DEFAULT_RULE, referenceUncertaintyMm, type Rule, type ShotComputed } from "~/domain";
import type { shots } from "~/db/schema";
import { computeShotRecordWith, SERVER_WORDING, type RecordError, type ShotRegistry, type SyncShot } from "~/contract";
import type { RegistryContext, SessionFacts, TapeEntry } from "./registry-context.server";

/** The stored computed columns: the ranging core's per-shot figures plus the shot's target and air facts. */
export type ComputedColumns = Pick<ShotComputed, "referenceM" | "rangeM" | "errorMm" | "toleranceMm" | "limitMm" | "within" | "repeatabilityMm" | "readingsCount" | "wrap" | "unambiguousM"> & {
  retro: boolean;
  airDefaulted: boolean;
  referenceUncertaintyMm: number | null;
};

export type ShotOutcome = { ok: true; columns: ComputedColumns; computed: ShotComputed } | { ok: false; errors: RecordError[] };

export function ruleFor(session: Pick<SessionFacts, "projectId">, ctx: RegistryContext): Rule {
  return (session.projectId && ctx.rules.get(session.projectId)) || DEFAULT_RULE;
}

/** The registry context as the contract's mapping looks it up: places only of the session's site. */
function shotRegistry(session: SessionFacts, ctx: RegistryContext): ShotRegistry<TapeEntry> {
  const atSite = <P extends { siteId: string }>(p: P | undefined) => (p && p.siteId === session.siteId ? p : undefined);
  return {
    sensor: ctx.sensors.get(session.sensorId),
    tape: (id) => ctx.tapes.get(id),
    station: (id) => atSite(ctx.stations.get(id)),
    target: (id) => atSite(ctx.targets.get(id)),
    edm: (id) => ctx.edms.get(id),
  };
}

export function computeShotRecord(shot: SyncShot, session: SessionFacts, ctx: RegistryContext): ShotOutcome {
  const rule = ruleFor(session, ctx);
  const out = computeShotRecordWith(shot, { sensorId: session.sensorId, air: session.air, rule }, shotRegistry(session, ctx), SERVER_WORDING);
  if (!out.ok) return { ok: false, errors: [out.error] };
  const { computed, sources } = out;
  const ref = shot.reference;
  // ranging.md §7: the sources of u_ref, resolved with the rest of the registry
  const u = referenceUncertaintyMm({
    method: ref.method,
    explicitMm: ref.uncertaintyMm ?? null,
    distanceM: ref.method === "coordinates" ? computed.referenceM : ref.distanceM,
    tape: sources.tape,
    stationSigmaMm: sources.station?.sigmaMm ?? null,
    targetSigmaMm: sources.target?.sigmaMm ?? null,
    edm: sources.edm,
    ruleEdm: rule,
  });
  return {
    ok: true,
    computed,
    columns: {
      referenceM: computed.referenceM,
      rangeM: computed.rangeM,
      errorMm: computed.errorMm,
      toleranceMm: computed.toleranceMm,
      limitMm: computed.limitMm,
      within: computed.within,
      repeatabilityMm: computed.repeatabilityMm,
      readingsCount: computed.readingsCount,
      wrap: computed.wrap,
      unambiguousM: computed.unambiguousM,
      retro: sources.target?.retro ?? false,
      airDefaulted: computed.airDefaulted.length > 0,
      referenceUncertaintyMm: u,
    },
  };
}

/** The insert row of an accepted shot. */
export function shotInsertRow(
  shot: SyncShot,
  raw: string,
  session: SessionFacts,
  columns: ComputedColumns,
  meta: { deviceId: string; syncedBy: string | null; receivedAt: string },
): typeof shots.$inferInsert {
  return {
    id: shot.id,
    sessionId: shot.sessionId,
    sensorId: session.sensorId,
    // as the tablet sent it, offset and all: the period filters read its local date
    takenAt: shot.takenAt,
    targetId: shot.targetId || null,
    raw,
    referenceMethod: shot.reference.method,
    reflectancePct: shot.reflectancePct,
    illuminanceKlux: shot.illuminanceKlux ?? null,
    incidenceDeg: shot.incidenceDeg ?? null,
    lat: shot.position?.lat ?? null,
    lon: shot.position?.lon ?? null,
    accuracyM: shot.position?.accuracyM ?? null,
    note: shot.note || null,
    deviceId: meta.deviceId,
    syncedBy: meta.syncedBy,
    receivedAt: meta.receivedAt,
    ...columns,
    excluded: false,
    computedAt: meta.receivedAt,
  };
}
