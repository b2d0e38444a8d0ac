// Instant feedback on the tablet: the shared ranging core (app/domain) run on the record about
// to be queued. The server recomputes everything itself; this is only for the crew's eyes.
import { computeShot, DEFAULT_RULE, DomainError, type ReferenceInput, type Rule, type ShotComputed } from "~/domain";
import type { RefEdm, RefProject, RefSensor, RefSite, RefTape, ShotPreview, SyncSessionRecord, SyncShotRecord } from "./types";

export type PreviewContext = {
  sensor: RefSensor | undefined;
  site: RefSite | undefined;
  tapes: RefTape[];
  project: RefProject | undefined;
  /** issue 15: reference EDMs the crew may name */
  edms?: RefEdm[];
};

export function ruleOf(project: RefProject | undefined): Rule {
  return project?.rule ?? DEFAULT_RULE;
}

export type PreviewResult =
  | { ok: true; preview: ShotPreview; computed: ShotComputed }
  | { ok: false; path: string; message: string };

function referenceInput(shot: SyncShotRecord, ctx: PreviewContext): ReferenceInput | { path: string; message: string } {
  const r = shot.reference;
  if (r.method === "edm") return { method: "edm", distanceM: r.distanceM as number };
  if (r.method === "tape") {
    const tape = ctx.tapes.find((t) => t.id === r.tape?.tapeId);
    if (!tape || !r.tape) return { path: "reference.tape.tapeId", message: "Choose the tape" };
    return {
      method: "tape",
      distanceM: r.distanceM as number,
      tape,
      tempC: r.tape.tempC,
      tensionN: r.tape.tensionN,
      support: r.tape.support,
      spans: r.tape.spans,
    };
  }
  const station = ctx.site?.stations.find((s) => s.id === r.stationId);
  const target = ctx.site?.targets.find((t) => t.id === shot.targetId);
  if (!station) return { path: "reference.stationId", message: "Choose the station the sensor stands on" };
  if (!target) return { path: "targetId", message: "Choose the target: its coordinates give the distance" };
  return {
    method: "coordinates",
    station: { grid: station.grid, geo: station.geo },
    target: { grid: target.grid, geo: target.geo },
    instrumentHeightM: r.instrumentHeightM ?? 0,
    targetHeightM: r.targetHeightM ?? 0,
  };
}

export function previewShot(session: SyncSessionRecord, shot: SyncShotRecord, ctx: PreviewContext): PreviewResult {
  if (!ctx.sensor) return { ok: false, path: "", message: "This sensor is not in the tablet's reference data: connect once to copy it." };
  const reference = referenceInput(shot, ctx);
  if ("path" in reference) return { ok: false, ...reference };
  try {
    const computed = computeShot({
      sensor: ctx.sensor,
      air: { airTempC: session.airTempC, pressureHpa: session.pressureHpa, humidityPct: session.humidityPct },
      reference,
      readings: shot.readings,
      rule: ruleOf(ctx.project),
    });
    return {
      ok: true,
      computed,
      preview: {
        referenceM: computed.referenceM,
        rangeM: computed.rangeM,
        errorMm: computed.errorMm,
        limitMm: computed.limitMm,
        within: computed.within,
        wrap: computed.wrap,
        airDefaulted: computed.airDefaulted,
      },
    };
  } catch (e) {
    if (e instanceof DomainError) return { ok: false, path: e.path, message: e.message.replace(/^[^:]*: /, "") };
    return { ok: false, path: "", message: e instanceof Error ? e.message : String(e) };
  }
}
