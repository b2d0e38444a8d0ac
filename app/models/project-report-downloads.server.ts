// Downloads of the project verification report (issue 14): the CSV bundle (shots + summary + the
// photos, zipped) and the GeoJSON of the project's shots. Each names the stored version it goes
// with (project-report.server.ts; issue 13: split out of it).

import { and, asc, eq, sql } from "drizzle-orm";
import { Zip, ZipDeflate, ZipPassThrough, strToU8 } from "fflate";
import Papa from "papaparse";
import { getDb, type Db } from "~/db/client.server";
import { checkSessions, exclusions, photos, sensors, shots, sites, targets } from "~/db/schema";
import type { Actor } from "./actor";
import { openPhoto, type PhotoRow } from "./photos.server";
import { currentProjectReport, type ReportVersion } from "./project-report.server";

// ---------------------------------------------------------------------------------------------
// Downloads: the CSV bundle (shots + summary + the photos, zipped) and the GeoJSON.

const shotColumns = {
  id: shots.id,
  takenAt: shots.takenAt,
  sessionId: shots.sessionId,
  sensorId: shots.sensorId,
  sensorLabel: sensors.label,
  sensorSerial: sensors.serial,
  siteName: sites.name,
  targetLabel: targets.label,
  referenceMethod: shots.referenceMethod,
  referenceM: shots.referenceM,
  referenceUncertaintyMm: shots.referenceUncertaintyMm,
  rangeM: shots.rangeM,
  errorMm: shots.errorMm,
  limitMm: shots.limitMm,
  within: shots.within,
  repeatabilityMm: shots.repeatabilityMm,
  reflectancePct: shots.reflectancePct,
  illuminanceKlux: shots.illuminanceKlux,
  incidenceDeg: shots.incidenceDeg,
  lat: shots.lat,
  lon: shots.lon,
  accuracyM: shots.accuracyM,
  wrap: shots.wrap,
  excluded: shots.excluded,
  note: shots.note,
};

async function projectShots(projectId: string, db: Db) {
  return db
    .select(shotColumns)
    .from(shots)
    .innerJoin(checkSessions, eq(checkSessions.id, shots.sessionId))
    .innerJoin(sensors, eq(sensors.id, shots.sensorId))
    .innerJoin(sites, eq(sites.id, checkSessions.siteId))
    .leftJoin(targets, eq(targets.id, shots.targetId))
    .where(eq(checkSessions.projectId, projectId))
    .orderBy(asc(shots.takenAt), asc(shots.id));
}

type Cell = string | number | boolean | null;
const yesNo = (b: boolean) => (b ? "yes" : "no");
// escapeFormulae: a text cell starting with = + - @ would run as a spreadsheet formula (OWASP "CSV injection")
const csv = (rows: Cell[][]) => Papa.unparse(rows, { escapeFormulae: true, newline: "\r\n" }) + "\r\n";

const EXT: Record<string, string> = { "image/jpeg": "jpg", "image/png": "png", "image/webp": "webp", "image/avif": "avif", "image/heic": "heic" };
const safeName = (s: string) => s.replace(/[^A-Za-z0-9._-]+/g, "-").replace(/^-+|-+$/g, "") || "project";

/** Names row, then units row, then one row per shot of the project. */
export const BUNDLE_SHOT_COLUMNS: [name: string, unit: string][] = [
  ["shotId", ""],
  ["takenAt", "ISO 8601"],
  ["sensor", ""],
  ["serial", ""],
  ["sessionId", ""],
  ["site", ""],
  ["target", ""],
  ["referenceMethod", ""],
  ["referenceM", "m"],
  ["referenceUncertaintyMm", "mm (k = 1)"],
  ["rangeM", "m"],
  ["errorMm", "mm"],
  ["limitMm", "mm"],
  ["within", "yes/no"],
  ["repeatabilityMm", "mm"],
  ["reflectancePct", "%"],
  ["illuminanceKlux", "klux"],
  ["incidenceDeg", "°"],
  ["lat", "° WGS 84"],
  ["lon", "° WGS 84"],
  ["positionAccuracyM", "m"],
  ["wrap", "yes/no"],
  ["excluded", "yes/no"],
  ["exclusionReason", ""],
  ["photos", "files in photos/"],
  ["note", ""],
];

export const BUNDLE_SUMMARY_COLUMNS = [
  "document",
  "sha256",
  "sensor",
  "serial",
  "verdict",
  "n",
  "excluded",
  "biasMm",
  "sdMm",
  "rmseMm",
  "rmseCombinedMm",
  "referenceRmseMm",
  "accuracy95Mm",
  "withinPct",
  "zeroOffsetMm",
  "scalePpm",
  "statementStyle",
  "statement",
] as const;

export type Bundle = { filename: string; body: ReadableStream<Uint8Array>; version: ReportVersion };

/**
 * The project's CSV bundle as a zip streamed while it is written: shots.csv, summary.csv (one
 * row per sensor, of the current report version), report.json (that version's content as
 * hashed) and photos/ (each photo as stored, named <shot id>-<photo id>.<ext>). Null when the
 * actor may not see the project.
 */
export async function projectBundle(actor: Actor, projectId: string, db: Db = getDb()): Promise<Bundle | null> {
  const current = await currentProjectReport(actor, projectId, db);
  if (!current) return null;
  const version: ReportVersion = current;
  const rows = await projectShots(projectId, db);
  const ids = rows.map((r) => r.id);
  const [photoRows, reasonRows] = ids.length
    ? await Promise.all([
        db
          .select({ id: photos.id, shotId: photos.shotId, contentType: photos.contentType, bytes: photos.bytes, sha256: photos.sha256, createdAt: photos.createdAt, path: photos.path })
          .from(photos)
          .innerJoin(shots, eq(shots.id, photos.shotId))
          .innerJoin(checkSessions, eq(checkSessions.id, shots.sessionId))
          .where(eq(checkSessions.projectId, projectId))
          .orderBy(asc(photos.createdAt), asc(photos.id)),
        db
          .select({ shotId: exclusions.shotId, reason: exclusions.reason, at: exclusions.createdAt })
          .from(exclusions)
          .innerJoin(shots, eq(shots.id, exclusions.shotId))
          .innerJoin(checkSessions, eq(checkSessions.id, shots.sessionId))
          .where(and(eq(checkSessions.projectId, projectId), sql`${exclusions.restoredAt} IS NULL`))
          .orderBy(asc(exclusions.createdAt)),
      ])
    : [[], []];
  const fileOf = (p: { id: string; shotId: string; contentType: string }) => `photos/${p.shotId}-${p.id}.${EXT[p.contentType] ?? "bin"}`;
  const photosByShot = new Map<string, string[]>();
  for (const p of photoRows) photosByShot.set(p.shotId, [...(photosByShot.get(p.shotId) ?? []), fileOf(p)]);
  const reasons = new Map<string, string>();
  for (const r of reasonRows) reasons.set(r.shotId, r.reason);

  const shotsCsv = csv([
    BUNDLE_SHOT_COLUMNS.map((c) => c[0]),
    BUNDLE_SHOT_COLUMNS.map((c) => c[1]),
    ...rows.map((r): Cell[] => [
      r.id,
      r.takenAt,
      r.sensorLabel,
      r.sensorSerial,
      r.sessionId,
      r.siteName,
      r.targetLabel ?? "",
      r.referenceMethod,
      r.referenceM,
      r.referenceUncertaintyMm,
      r.rangeM,
      r.errorMm,
      r.limitMm,
      yesNo(r.within),
      r.repeatabilityMm,
      r.reflectancePct,
      r.illuminanceKlux,
      r.incidenceDeg,
      r.lat,
      r.lon,
      r.accuracyM,
      yesNo(r.wrap),
      yesNo(r.excluded),
      r.excluded ? (reasons.get(r.id) ?? "") : "",
      (photosByShot.get(r.id) ?? []).join(" "),
      r.note ?? "",
    ]),
  ]);
  const c = version.content;
  const summaryCsv = csv([
    [...BUNDLE_SUMMARY_COLUMNS],
    ...c.sensors.map((s): Cell[] => {
      const f = s.figures;
      return [
        version.number,
        version.sha256,
        s.label,
        s.serial,
        s.verdict,
        f?.n ?? 0,
        f?.excluded ?? 0,
        f?.biasMm ?? null,
        f?.sdMm ?? null,
        f?.rmseMm ?? null,
        f?.rmseCombinedMm ?? null,
        f?.referenceRmseMm ?? null,
        f?.accuracy95Mm ?? null,
        f?.withinPct ?? null,
        f?.zeroOffsetMm ?? null,
        f?.scalePpm ?? null,
        c.rule.statement,
        s.statementSentence,
      ];
    }),
  ]);

  const missing: string[] = [];
  async function* chunks(): AsyncGenerator<Uint8Array> {
    const out: Uint8Array[] = [];
    let failure: Error | null = null;
    const zip = new Zip((err, data) => {
      if (err) failure = err;
      else out.push(data);
    });
    const drain = function* () {
      if (failure) throw failure;
      while (out.length) yield out.shift()!;
    };
    const text = (name: string, body: string) => {
      const f = new ZipDeflate(name, { level: 6 });
      zip.add(f);
      f.push(strToU8(body), true);
    };
    text("shots.csv", shotsCsv);
    text("summary.csv", summaryCsv);
    text("report.json", version.text);
    yield* drain();
    for (const p of photoRows) {
      const found = await openPhoto(p as PhotoRow);
      if (!found) {
        missing.push(fileOf(p));
        continue;
      }
      // photos are compressed already: stored as they are
      const f = new ZipPassThrough(fileOf(p));
      zip.add(f);
      const reader = found.body.getReader();
      for (;;) {
        const { value, done } = await reader.read();
        if (done) break;
        f.push(value);
        yield* drain();
      }
      f.push(new Uint8Array(0), true);
      yield* drain();
    }
    text(
      "README.txt",
      [
        `Project verification report ${version.number} (${c.project.name}${c.project.client ? `, client ${c.project.client}` : ""})`,
        `SHA-256 of report.json: ${version.sha256}`,
        `shots.csv: ${rows.length} check-shots (row 1 names, row 2 units). summary.csv: one row per sensor.`,
        `photos/: ${photoRows.length - missing.length} photo file(s), named <shot id>-<photo id>.`,
        ...(missing.length ? [`Missing from the file store (listed in shots.csv, not included): ${missing.join(", ")}`] : []),
        "",
      ].join("\r\n"),
    );
    zip.end();
    yield* drain();
  }
  const it = chunks();
  const body = new ReadableStream<Uint8Array>({
    async pull(controller) {
      try {
        const { value, done } = await it.next();
        if (done) controller.close();
        else controller.enqueue(value);
      } catch (e) {
        controller.error(e);
      }
    },
    async cancel() {
      await it.return(undefined);
    },
  });
  return { filename: `${safeName(version.number)}-bundle.zip`, body, version };
}

/**
 * The project's located shots as a GeoJSON FeatureCollection (RFC 7946: [lon, lat] in WGS 84),
 * with the sites that have a position; the document's number, version and hash as a foreign
 * member. Null when the actor may not see the project.
 */
export async function projectGeoJson(actor: Actor, projectId: string, db: Db = getDb()) {
  const version = await currentProjectReport(actor, projectId, db);
  if (!version) return null;
  const rows = await projectShots(projectId, db);
  const shotFeatures = rows
    .filter((r) => r.lat != null && r.lon != null)
    .map((r) => ({
      type: "Feature" as const,
      id: r.id,
      geometry: { type: "Point" as const, coordinates: [r.lon!, r.lat!] },
      properties: {
        kind: "shot",
        id: r.id,
        sensorId: r.sensorId,
        sensor: r.sensorLabel,
        sessionId: r.sessionId,
        site: r.siteName,
        takenAt: r.takenAt,
        referenceM: r.referenceM,
        rangeM: r.rangeM,
        errorMm: r.errorMm,
        limitMm: r.limitMm,
        within: r.within,
        excluded: r.excluded,
        reflectancePct: r.reflectancePct,
        illuminanceKlux: r.illuminanceKlux,
        accuracyM: r.accuracyM,
      },
    }));
  const siteFeatures = version.content.sites
    .filter((s) => s.lat != null && s.lon != null)
    .map((s) => ({ type: "Feature" as const, id: `site-${s.id}`, geometry: { type: "Point" as const, coordinates: [s.lon!, s.lat!] }, properties: { kind: "site", id: s.id, name: s.name } }));
  return {
    version,
    body: {
      type: "FeatureCollection" as const,
      // RFC 7946 §6.1 foreign member: which document these features belong to
      document: { number: version.number, projectId, version: version.version, sha256: version.sha256 },
      features: [...siteFeatures, ...shotFeatures],
    },
    filename: `${safeName(version.number)}.geojson`,
  };
}
