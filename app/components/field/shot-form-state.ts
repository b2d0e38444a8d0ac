// The log-shot form's state: what each box holds (text, as typed), its first values from the
// session, the sensor and a shot being fixed, and the state → the shot draft the outbox stores.
// Pure; the form (shot-form.tsx) draws it. Issue 13: split out of shot-form.tsx.
import type { ShotDraft } from "~/offline/outbox";
import type { PreviewContext } from "~/offline/preview";
import type { LocalSession, LocalShot, SyncShotRecord } from "~/offline/types";
import { parseList, parseNum } from "./inputs";

export type Method = "tape" | "edm" | "coordinates";
export type ReadingKind = "rangesM" | "roundTripNs" | "phase";

export type ShotFormState = {
  targetId: string;
  method: Method;
  distanceM: string;
  tapeId: string;
  tapeTempC: string;
  tensionN: string;
  support: "ground" | "ends";
  spans: string;
  stationId: string;
  instrumentHeightM: string;
  targetHeightM: string;
  // issue 15 (ranging.md §7)
  edmId: string;
  refUncertaintyMm: string;
  readingKind: ReadingKind;
  ranges: string[];
  roundTrips: string[];
  phase: { frequencyHz: string; samples: string }[];
  reflectancePct: string;
  illuminanceKlux: string;
  incidenceDeg: string;
  position: NonNullable<SyncShotRecord["position"]> | null;
  note: string;
};

const s = (n: number | undefined | null) => (n == null ? "" : String(n));

export function initialState(session: LocalSession, ctx: PreviewContext, existing?: LocalShot): ShotFormState {
  const freqs = ctx.sensor?.modulationHz ?? [];
  const base: ShotFormState = {
    targetId: "",
    method: ctx.tapes.length ? "tape" : "edm",
    distanceM: "",
    tapeId: ctx.tapes[0]?.id ?? "",
    tapeTempC: s(session.record.airTempC),
    tensionN: s(ctx.tapes[0]?.standardTensionN),
    support: "ground",
    spans: "1",
    stationId: ctx.site?.stations[0]?.id ?? "",
    instrumentHeightM: "",
    targetHeightM: "",
    edmId: "",
    refUncertaintyMm: "",
    readingKind: "rangesM",
    ranges: [""],
    roundTrips: [""],
    phase: freqs.map((f) => ({ frequencyHz: String(f), samples: "" })),
    reflectancePct: "",
    illuminanceKlux: s(session.illuminanceKlux),
    incidenceDeg: "",
    position: null,
    note: "",
  };
  if (!existing) return base;
  const r = existing.record;
  const rd = r.readings;
  return {
    ...base,
    targetId: r.targetId ?? "",
    method: r.reference.method,
    distanceM: s(r.reference.distanceM),
    tapeId: r.reference.tape?.tapeId ?? base.tapeId,
    tapeTempC: s(r.reference.tape?.tempC),
    tensionN: s(r.reference.tape?.tensionN),
    support: r.reference.tape?.support ?? "ground",
    spans: s(r.reference.tape?.spans ?? 1),
    stationId: r.reference.stationId ?? base.stationId,
    instrumentHeightM: s(r.reference.instrumentHeightM),
    targetHeightM: s(r.reference.targetHeightM),
    edmId: r.reference.edmId ?? "",
    refUncertaintyMm: s(r.reference.uncertaintyMm),
    readingKind: "rangesM" in rd ? "rangesM" : "roundTripNs" in rd ? "roundTripNs" : "phase",
    ranges: "rangesM" in rd ? rd.rangesM.map(String) : [""],
    roundTrips: "roundTripNs" in rd ? rd.roundTripNs.map(String) : [""],
    phase: "phase" in rd ? rd.phase.map((p) => ({ frequencyHz: String(p.frequencyHz), samples: p.samples.join(" ") })) : base.phase,
    reflectancePct: s(r.reflectancePct),
    illuminanceKlux: s(r.illuminanceKlux),
    incidenceDeg: s(r.incidenceDeg),
    position: r.position ?? null,
    note: r.note ?? "",
  };
}

export function toShotDraft(f: ShotFormState, sessionId: string, id?: string, takenAt?: string): ShotDraft {
  const num = (v: string) => parseNum(v);
  const reference: SyncShotRecord["reference"] = { method: f.method };
  if (f.method !== "coordinates") reference.distanceM = num(f.distanceM);
  if (f.method === "tape") {
    reference.tape = {
      tapeId: f.tapeId,
      tempC: num(f.tapeTempC) as number,
      tensionN: num(f.tensionN) as number,
      support: f.support,
      spans: num(f.spans) as number,
    };
  }
  if (f.method === "coordinates") {
    reference.stationId = f.stationId || undefined;
    reference.instrumentHeightM = num(f.instrumentHeightM);
    reference.targetHeightM = num(f.targetHeightM);
  }
  if (f.method === "edm" && f.edmId) reference.edmId = f.edmId;
  if (f.refUncertaintyMm.trim() !== "") reference.uncertaintyMm = num(f.refUncertaintyMm);
  const readings: SyncShotRecord["readings"] =
    f.readingKind === "rangesM"
      ? { rangesM: f.ranges.filter((x) => x.trim() !== "").map((x) => num(x) as number) }
      : f.readingKind === "roundTripNs"
        ? { roundTripNs: f.roundTrips.filter((x) => x.trim() !== "").map((x) => num(x) as number) }
        : { phase: f.phase.filter((p) => p.samples.trim() !== "").map((p) => ({ frequencyHz: Number(p.frequencyHz), samples: parseList(p.samples) })) };
  return {
    ...(id ? { id } : {}),
    ...(takenAt ? { takenAt } : {}),
    sessionId,
    targetId: f.targetId || undefined,
    reference,
    readings,
    reflectancePct: num(f.reflectancePct) as number,
    illuminanceKlux: num(f.illuminanceKlux) as number,
    incidenceDeg: num(f.incidenceDeg),
    position: f.position ?? undefined,
    note: f.note.trim() || undefined,
  };
}

/**
 * Where a draft waits in localStorage: the session's half-typed NEW shot under one key, the
 * edit of a queued shot under that shot's own key, so that saving or leaving an edit never
 * touches the new shot the crew was typing (and the other way round).
 */
export const draftKey = (sessionId: string) => `shotbook-shot-draft:${sessionId}`;
export const editDraftKey = (shotId: string) => `shotbook-shot-edit-draft:${shotId}`;

/** Sets one box of the form (and marks the draft as changed). */
export type SetField = <K extends keyof ShotFormState>(k: K, v: ShotFormState[K]) => void;
