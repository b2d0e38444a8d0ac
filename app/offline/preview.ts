// Instant feedback on the tablet: the shared ranging core (app/domain) run on the record about
// to be queued, through the contract's record → core mapping (the server runs the same one).
// The server recomputes everything itself; this is only for the crew's eyes.
import { computeShotRecordWith, TABLET_WORDING, type ShotRegistry } from "~/contract";
import { DEFAULT_RULE, type Rule, type ShotComputed } from "~/domain";
import type { RefEdm, RefPoint, RefProject, RefSensor, RefSite, RefTape, ShotPreview, SyncSessionRecord, SyncShotRecord } from "./types";

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

export type PreviewResult = { ok: true; preview: ShotPreview; computed: ShotComputed } | { ok: false; path: string; message: string };

const place = (p: RefPoint | undefined) => (p ? { position: { grid: p.grid, geo: p.geo } } : undefined);

/** The tablet's copy of the registry as the contract's mapping looks it up. */
function registryOf(ctx: PreviewContext): ShotRegistry<RefTape> {
  return {
    sensor: ctx.sensor,
    tape: (id) => ctx.tapes.find((t) => t.id === id),
    station: (id) => place(ctx.site?.stations.find((s) => s.id === id)),
    target: (id) => {
      const t = ctx.site?.targets.find((x) => x.id === id);
      return t ? { position: { grid: t.grid, geo: t.geo }, retro: t.retro } : undefined;
    },
  };
}

export function previewShot(session: SyncSessionRecord, shot: SyncShotRecord, ctx: PreviewContext): PreviewResult {
  try {
    const out = computeShotRecordWith(
      shot,
      {
        sensorId: session.sensorId,
        air: { airTempC: session.airTempC, pressureHpa: session.pressureHpa, humidityPct: session.humidityPct },
        rule: ruleOf(ctx.project),
      },
      registryOf(ctx),
      TABLET_WORDING,
    );
    if (!out.ok) return { ok: false, ...out.error };
    const { computed } = out;
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
    return { ok: false, path: "", message: e instanceof Error ? e.message : String(e) };
  }
}
