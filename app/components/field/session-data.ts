// What a session's screens read from IndexedDB: the session, its reference context and shots.
import { coverageChecklist, rangeBandIndex, illuminanceBand, rangeBandLabels, siteCoverageCells, type CoverageCell, type CoverageResult, type CoverageShot, type SiteCell } from "~/domain";
import { fieldDb } from "~/offline/db";
import { ruleOf } from "~/offline/preview";
import type { PreviewContext } from "~/offline/preview";
import { readReference, type ReferenceCopy } from "~/offline/reference";
import type { LocalSession, LocalShot } from "~/offline/types";

export type SessionData = {
  session: LocalSession | null;
  reference: ReferenceCopy;
  shots: LocalShot[];
  photoShotIds: string[];
};

export async function loadSession(sessionId: string): Promise<SessionData> {
  const db = fieldDb();
  const [session, reference, shots] = await Promise.all([db.sessions.get(sessionId), readReference(), db.shots.where("sessionId").equals(sessionId).sortBy("queuedAt")]);
  const photos = shots.length
    ? await db.photos
        .where("shotId")
        .anyOf(shots.map((s) => s.id))
        .toArray()
    : [];
  return { session: session ?? null, reference, shots, photoShotIds: photos.map((p) => p.shotId) };
}

export function contextOf(session: LocalSession, reference: ReferenceCopy): PreviewContext {
  const project = session.record.projectId ? reference.projects.find((p) => p.id === session.record.projectId) : undefined;
  // issue 14: a session offers only its project's tapes and EDMs (the server refuses the others);
  // a copy made before projects listed them offers all it holds
  const tapeIds = project?.tapeIds ? new Set(project.tapeIds) : null;
  const edmIds = project?.edmIds ? new Set(project.edmIds) : null;
  return {
    sensor: reference.sensors.find((s) => s.id === session.record.sensorId),
    site: reference.sites.find((s) => s.id === session.record.siteId),
    tapes: tapeIds ? reference.tapes.filter((t) => tapeIds.has(t.id)) : reference.tapes,
    edms: (reference.edms ?? []).filter((e) => !edmIds || edmIds.has(e.id)),
    project,
  };
}

export type SessionCoverage = {
  shots: CoverageShot[];
  labels: string[];
  result: CoverageResult | null;
  /** Per range band: how many shots in low, moderate and high light. */
  light: { low: number; moderate: number; high: number }[];
  /** Every cell with the site's targets that can fill it (none: out of the site's reach). */
  siteCells: SiteCell[];
  /** Missing cells this site can fill, and those it cannot. */
  missingHere: CoverageCell[];
  outOfReach: CoverageCell[];
};

export const cellKey = (c: { rangeBand: string; reflectance: string }) => `${c.rangeBand}|${c.reflectance}`;

/** The coverage checklist of a session's shots (ranging.md §6), shared by the checklist and the end-of-session summary. */
export function sessionCoverage(data: SessionData, ctx: PreviewContext): SessionCoverage {
  const rule = ruleOf(ctx.project);
  const shots: CoverageShot[] = data.shots.flatMap((s) => {
    const referenceM = s.preview?.referenceM ?? s.record.reference.distanceM;
    if (referenceM == null) return [];
    const t = ctx.site?.targets.find((x) => x.id === s.record.targetId);
    return [{ referenceM, reflectancePct: s.record.reflectancePct, retro: t?.retro ?? false, illuminanceKlux: s.record.illuminanceKlux }];
  });
  const labels = rangeBandLabels(rule.rangeBandEdgesM);
  const result = ctx.sensor ? coverageChecklist({ sensor: ctx.sensor, rule, shots }) : null;
  const light = labels.map(() => ({ low: 0, moderate: 0, high: 0 }));
  for (const s of shots) {
    const b = rangeBandIndex(s.referenceM, rule.rangeBandEdgesM);
    if (b >= 0 && s.illuminanceKlux != null) light[b]![illuminanceBand(s.illuminanceKlux)]++;
  }
  const siteCells = siteCoverageCells(ctx.site?.targets ?? [], rule.rangeBandEdgesM);
  const fillable = new Set(siteCells.filter((c) => c.targets.length).map(cellKey));
  const missing = result?.missing ?? [];
  return {
    shots,
    labels,
    result,
    light,
    siteCells,
    missingHere: missing.filter((c) => fillable.has(cellKey(c))),
    outOfReach: missing.filter((c) => !fillable.has(cellKey(c))),
  };
}
