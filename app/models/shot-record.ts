// One shot: raw observation + its session + the registry → the stored computed columns.
// Pure (no database, no server state), so the sync worker threads (issue 16,
// app/models/sync.worker.ts) run it as the request's own thread does; shots.server.ts
// re-exports it for everything else.
import { computeShot, DEFAULT_RULE, DomainError, referenceUncertaintyMm, type LinearUncertainty, type ReferenceInput, type Rule } from "~/domain";
import type { shots } from "~/db/schema";
import type { PlaceEntry, RegistryContext, SessionFacts, TapeEntry, TargetEntry } from "./shots.server";
import type { RecordError, SyncShot } from "./sync-schemas";
import type { ShotComputed } from "~/domain";

/** The stored computed columns: the ranging core's per-shot figures plus the shot's target and air facts. */
export type ComputedColumns = Pick<
  ShotComputed,
  "referenceM" | "rangeM" | "errorMm" | "toleranceMm" | "limitMm" | "within" | "repeatabilityMm" | "readingsCount" | "wrap" | "unambiguousM"
> & { retro: boolean; airDefaulted: boolean; referenceUncertaintyMm: number | null };

export type ShotOutcome = { ok: true; columns: ComputedColumns; computed: ShotComputed } | { ok: false; errors: RecordError[] };

const TAPE_FIELD = /^reference\.(tempC|tensionN|support|spans)$/;

/** A domain path (relative to the domain's ShotInput) → the path of the field in the sync record. */
function recordPath(e: DomainError): RecordError {
  const p = e.path ?? "";
  if (TAPE_FIELD.test(p)) return { path: p.replace("reference.", "reference.tape."), message: e.message };
  if (p.startsWith("reference.tape.")) return { path: "reference.tape.tapeId", message: `the tape's registry constants are not usable: ${e.message}` };
  if (p.startsWith("reference.station")) return { path: "reference.stationId", message: e.message };
  if (p.startsWith("reference.target")) return { path: "targetId", message: e.message };
  if (p.startsWith("sensor") || p.startsWith("rule")) return { path: "sessionId", message: `the session's sensor or acceptance rule is not usable: ${e.message}` };
  if (p === "airTempC" || p === "pressureHpa" || p === "humidityPct") return { path: "sessionId", message: `the session's air is not usable: ${e.message}` };
  return { path: p, message: e.message };
}

export function ruleFor(session: Pick<SessionFacts, "projectId">, ctx: RegistryContext): Rule {
  return (session.projectId && ctx.rules.get(session.projectId)) || DEFAULT_RULE;
}

export function computeShotRecord(shot: SyncShot, session: SessionFacts, ctx: RegistryContext): ShotOutcome {
  const sensor = ctx.sensors.get(session.sensorId);
  if (!sensor) return { ok: false, errors: [{ path: "sessionId", message: `the session's sensor ${session.sensorId} is not in the registry` }] };
  let target: TargetEntry | undefined;
  if (shot.targetId) {
    target = ctx.targets.get(shot.targetId);
    if (!target || target.siteId !== session.siteId) {
      return { ok: false, errors: [{ path: "targetId", message: `target ${shot.targetId} is not a target of the session's site` }] };
    }
  }
  const ref = shot.reference;
  let reference: ReferenceInput;
  // ranging.md §7: the sources of u_ref, resolved with the rest of the registry
  let edm: LinearUncertainty | null = null;
  let tapeEntry: TapeEntry | null = null;
  let station: PlaceEntry | undefined;
  if (ref.method === "edm") {
    reference = { method: "edm", distanceM: ref.distanceM };
    if (ref.edmId) {
      edm = ctx.edms.get(ref.edmId) ?? null;
      if (!edm) return { ok: false, errors: [{ path: "reference.edmId", message: `reference EDM ${ref.edmId} is not in the registry` }] };
    }
  } else if (ref.method === "tape") {
    const tape = ctx.tapes.get(ref.tape.tapeId);
    if (!tape) return { ok: false, errors: [{ path: "reference.tape.tapeId", message: `tape ${ref.tape.tapeId} is not in the registry` }] };
    tapeEntry = tape;
    reference = { method: "tape", distanceM: ref.distanceM, tape, tempC: ref.tape.tempC, tensionN: ref.tape.tensionN, support: ref.tape.support, spans: ref.tape.spans };
  } else {
    station = ctx.stations.get(ref.stationId);
    if (!station || station.siteId !== session.siteId) {
      return { ok: false, errors: [{ path: "reference.stationId", message: `station ${ref.stationId} is not a station of the session's site` }] };
    }
    if (!target) return { ok: false, errors: [{ path: "targetId", message: "a target is needed when the reference comes from coordinates" }] };
    reference = { method: "coordinates", station: station.position, target: target.position, instrumentHeightM: ref.instrumentHeightM, targetHeightM: ref.targetHeightM };
  }
  try {
    const rule = ruleFor(session, ctx);
    const computed = computeShot({ sensor, air: session.air, reference, readings: shot.readings as ShotInputReadings, rule });
    const u = referenceUncertaintyMm({
      method: ref.method,
      explicitMm: ref.uncertaintyMm ?? null,
      distanceM: ref.method === "coordinates" ? computed.referenceM : ref.distanceM,
      tape: tapeEntry,
      stationSigmaMm: station?.sigmaMm ?? null,
      targetSigmaMm: target?.sigmaMm ?? null,
      edm,
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
        retro: target?.retro ?? false,
        airDefaulted: computed.airDefaulted.length > 0,
        referenceUncertaintyMm: u,
      },
    };
  } catch (e) {
    if (e instanceof DomainError) return { ok: false, errors: [recordPath(e)] };
    throw e;
  }
}
type ShotInputReadings = Parameters<typeof computeShot>[0]["readings"];

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
