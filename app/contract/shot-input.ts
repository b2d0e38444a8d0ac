// A shot record → the ranging core's input, and the core's refusals → the record's field paths.
// One mapping for both sides: the tablet's instant check (app/offline/preview.ts) and the
// server's authoritative computation (app/models/shots.server.ts). Each side says in its own
// words what is missing from its copy of the registry (SERVER_WORDING, TABLET_WORDING).
import {
  computeShot,
  DomainError,
  type AirInput,
  type LinearUncertainty,
  type Position,
  type Readings,
  type ReferenceInput,
  type Rule,
  type SensorSpec,
  type ShotComputed,
  type TapeSpec,
} from "~/domain";
import type { FieldError } from "./errors";
import type { ReferenceRecord } from "./sync";

export type PlaceFacts = { position: Position; sigmaMm?: number | null };
export type TargetFacts = PlaceFacts & { retro: boolean };

/** What the mapping looks up. Stations and targets are those of the session's site only. */
export type ShotRegistry<T extends TapeSpec = TapeSpec> = {
  sensor: SensorSpec | undefined;
  tape: (id: string) => T | undefined;
  station: (id: string) => PlaceFacts | undefined;
  target: (id: string) => TargetFacts | undefined;
  /** Absent: reference EDMs are not checked (a tablet's copy may predate them). */
  edm?: (id: string) => LinearUncertainty | undefined;
};

/** The parts of a shot record the computation reads. */
export type ShotFacts = { targetId?: string | null; reference: ReferenceRecord; readings: Readings };

export type Wording = {
  missingSensor: (sensorId: string) => FieldError;
  unknownTape: (id: string | undefined) => string;
  unknownStation: (id: string | undefined) => string;
  unknownTarget: (id: string) => string;
  targetNeeded: string;
  unknownEdm: (id: string) => string;
  /** The server refuses a target of another site on any shot; the tablet leaves that to the server. */
  checkEveryTarget: boolean;
  /** The tablet shows the core's message without the core's path in front. */
  bareDomainMessages: boolean;
};

/** The server's words (api.md errors[]): they name the record's ids. */
export const SERVER_WORDING: Wording = {
  missingSensor: (id) => ({ path: "sessionId", message: `the session's sensor ${id} is not in the registry` }),
  unknownTape: (id) => `tape ${id} is not in the registry`,
  unknownStation: (id) => `station ${id} is not a station of the session's site`,
  unknownTarget: (id) => `target ${id} is not a target of the session's site`,
  targetNeeded: "a target is needed when the reference comes from coordinates",
  unknownEdm: (id) => `reference EDM ${id} is not in the registry`,
  checkEveryTarget: true,
  bareDomainMessages: false,
};

/** The tablet's words: what the crew should do. A missing sensor has no path so the shot still saves. */
export const TABLET_WORDING: Wording = {
  missingSensor: () => ({ path: "", message: "This sensor is not in the tablet's reference data: connect once to copy it." }),
  unknownTape: () => "Choose the tape",
  unknownStation: () => "Choose the station the sensor stands on",
  unknownTarget: () => "Choose the target: its coordinates give the distance",
  targetNeeded: "Choose the target: its coordinates give the distance",
  unknownEdm: (id) => `Reference EDM ${id} is not on this tablet`,
  checkEveryTarget: false,
  bareDomainMessages: true,
};

/** Where a computation's figures came from, for the reference uncertainty (ranging.md §7). */
export type ShotSources<T extends TapeSpec = TapeSpec> = { tape: T | null; station: PlaceFacts | null; target: TargetFacts | null; edm: LinearUncertainty | null };

export type RecordComputation<T extends TapeSpec = TapeSpec> = { ok: true; computed: ShotComputed; sources: ShotSources<T> } | { ok: false; error: FieldError };

const TAPE_FIELD = /^reference\.(tempC|tensionN|support|spans)$/;

/** A ranging-core path (relative to its ShotInput) → the path of the field in the shot record. */
export function recordErrorOf(e: DomainError, bare = false): FieldError {
  const p = e.path ?? "";
  const message = bare && p && e.message.startsWith(`${p}: `) ? e.message.slice(p.length + 2) : e.message;
  if (TAPE_FIELD.test(p)) return { path: p.replace("reference.", "reference.tape."), message };
  if (p.startsWith("reference.tape.")) return { path: "reference.tape.tapeId", message: `the tape's registry constants are not usable: ${message}` };
  if (p.startsWith("reference.station")) return { path: "reference.stationId", message };
  if (p.startsWith("reference.target")) return { path: "targetId", message };
  if (p.startsWith("sensor") || p.startsWith("rule")) return { path: "sessionId", message: `the session's sensor or acceptance rule is not usable: ${message}` };
  if (p === "airTempC" || p === "pressureHpa" || p === "humidityPct") return { path: "sessionId", message: `the session's air is not usable: ${message}` };
  return { path: p, message };
}

/**
 * Runs the ranging core on one shot record with its session's air and rule. Registry entries
 * the record names but the registry lacks, and the core's own refusals (DomainError), come back
 * as one field error on the record's path; anything else is thrown.
 */
export function computeShotRecordWith<T extends TapeSpec>(shot: ShotFacts, session: { sensorId: string; air: AirInput; rule: Rule }, registry: ShotRegistry<T>, say: Wording): RecordComputation<T> {
  const fail = (path: string, message: string) => ({ ok: false as const, error: { path, message } });
  const sensor = registry.sensor;
  if (!sensor) return { ok: false, error: say.missingSensor(session.sensorId) };
  let target: TargetFacts | null = null;
  if (shot.targetId) {
    target = registry.target(shot.targetId) ?? null;
    if (!target && say.checkEveryTarget) return fail("targetId", say.unknownTarget(shot.targetId));
  }
  const r = shot.reference;
  const sources: ShotSources<T> = { tape: null, station: null, target, edm: null };
  // a distance left out of a record the schema passed cannot happen; the core refuses NaN anyway
  const distanceM = r.distanceM ?? Number.NaN;
  let reference: ReferenceInput;
  if (r.method === "edm") {
    reference = { method: "edm", distanceM };
    if (r.edmId && registry.edm) {
      sources.edm = registry.edm(r.edmId) ?? null;
      if (!sources.edm) return fail("reference.edmId", say.unknownEdm(r.edmId));
    }
  } else if (r.method === "tape") {
    const tape = r.tape ? registry.tape(r.tape.tapeId) : undefined;
    if (!tape || !r.tape) return fail("reference.tape.tapeId", say.unknownTape(r.tape?.tapeId));
    sources.tape = tape;
    reference = { method: "tape", distanceM, tape, tempC: r.tape.tempC, tensionN: r.tape.tensionN, support: r.tape.support, spans: r.tape.spans ?? 1 };
  } else {
    const station = r.stationId ? registry.station(r.stationId) : undefined;
    if (!station) return fail("reference.stationId", say.unknownStation(r.stationId));
    sources.station = station;
    if (!target) return fail("targetId", shot.targetId ? say.unknownTarget(shot.targetId) : say.targetNeeded);
    reference = { method: "coordinates", station: station.position, target: target.position, instrumentHeightM: r.instrumentHeightM ?? 0, targetHeightM: r.targetHeightM ?? 0 };
  }
  try {
    return { ok: true, computed: computeShot({ sensor, air: session.air, reference, readings: shot.readings, rule: session.rule }), sources };
  } catch (e) {
    if (e instanceof DomainError) return { ok: false, error: recordErrorOf(e, say.bareDomainMessages) };
    throw e;
  }
}
