// Rows of a sensor's own CSV export → check-shots of the sync contract (api.md). Pure and
// shared: the browser uses it for the preview's per-row errors, the server again on import.
import { computeShot, DEFAULT_RULE, DomainError, distanceBoundsMessage, isImplausible, MAX_DISTANCE_M, type AirInput, type SensorSpec } from "~/domain";
export const IMPORT_FIELDS = [
  { key: "takenAt", label: "Time of the shot", required: true, hint: "ISO 8601, or “YYYY-MM-DD HH:MM[:SS]” in the offset below" },
  { key: "rangeM", label: "Sensor range", required: true, hint: "the range the sensor reported" },
  { key: "distanceM", label: "Reference distance", required: false, hint: "EDM or surveyed; empty: the target's surveyed distance" },
  { key: "target", label: "Target label", required: false, hint: "matched to the site's targets" },
  { key: "reflectancePct", label: "Reflectance (%)", required: false, hint: "empty: the target's reflectance" },
  { key: "illuminanceKlux", label: "Illuminance (klux)", required: false, hint: "" },
  { key: "incidenceDeg", label: "Incidence angle (°)", required: false, hint: "" },
  { key: "lat", label: "Latitude (°)", required: false, hint: "WGS 84" },
  { key: "lon", label: "Longitude (°)", required: false, hint: "WGS 84" },
  { key: "accuracyM", label: "GPS accuracy (m)", required: false, hint: "" },
  { key: "note", label: "Note", required: false, hint: "" },
] as const;

export type ImportField = (typeof IMPORT_FIELDS)[number]["key"];
export type LengthUnit = "m" | "mm";
export type ImportMapping = Partial<Record<ImportField, string>> & { _rangeUnit?: LengthUnit; _distanceUnit?: LengthUnit; _timeOffset?: string };

export type ImportTarget = { id: string; label: string; reflectancePct: number; referenceM: number | null };

export type SyncShotBody = {
  id: string;
  sessionId: string;
  takenAt: string;
  targetId?: string;
  reference: { distanceM: number; method: "edm" };
  readings: { rangesM: number[] };
  reflectancePct: number;
  illuminanceKlux: number | null;
  incidenceDeg?: number;
  position?: { lat: number; lon: number; accuracyM?: number };
  note?: string;
};

export type RowError = { field: string; message: string };
export type MappedRow = { ok: true; shot: Omit<SyncShotBody, "id" | "sessionId"> } | { ok: false; errors: RowError[] };

/** "25.011", "25,011" (decimal comma), " 1 234.5 " → number; "" → null; junk → NaN. */
export function parseNumber(text: string | undefined): number | null {
  if (text == null) return null;
  let t = text.trim().replace(/\s+/g, "");
  if (t === "") return null;
  if (!t.includes(".") && /^-?\d+,\d+$/.test(t)) t = t.replace(",", ".");
  if (!/^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$/.test(t)) return Number.NaN;
  return Number(t);
}

const OFFSET = /^[+-]\d{2}:\d{2}$/;

/** ISO 8601 with an offset; a time without one takes the file's offset. Returns null when unreadable. */
export function parseTime(text: string | undefined, offset = "+00:00"): string | null {
  const t = (text ?? "").trim();
  if (!t) return null;
  const m = /^(\d{4}-\d{2}-\d{2})[T ](\d{2}:\d{2})(:\d{2}(\.\d+)?)?\s*(Z|[+-]\d{2}:?\d{2})?$/.exec(t);
  if (!m) return null;
  const off = m[5] ? (m[5] === "Z" ? "Z" : m[5].includes(":") ? m[5] : `${m[5].slice(0, 3)}:${m[5].slice(3)}`) : OFFSET.test(offset) ? offset : "+00:00";
  const iso = `${m[1]}T${m[2]}${m[3] ?? ":00"}${off}`;
  return Number.isNaN(Date.parse(iso)) ? null : iso;
}

function toMetres(v: number, unit: LengthUnit | undefined) {
  return unit === "mm" ? v / 1000 : v;
}

/** One CSV row (header → text) through the mapping; every problem of the row is listed. */
export function mapRow(raw: Record<string, string | undefined>, mapping: ImportMapping, targets: ImportTarget[]): MappedRow {
  const errors: RowError[] = [];
  const cell = (f: ImportField) => {
    const col = mapping[f];
    return col ? raw[col] : undefined;
  };
  const number = (f: ImportField, label: string, check?: (v: number) => string | null) => {
    const v = parseNumber(cell(f));
    if (v == null) return null;
    if (!Number.isFinite(v)) {
      errors.push({ field: f, message: `${label}: “${cell(f)}” is not a number` });
      return null;
    }
    const bad = check?.(v);
    if (bad) {
      errors.push({ field: f, message: `${label}: ${bad}` });
      return null;
    }
    return v;
  };

  const takenAt = parseTime(cell("takenAt"), mapping._timeOffset);
  if (!takenAt) errors.push({ field: "takenAt", message: cell("takenAt")?.trim() ? `Time: “${cell("takenAt")}” is not a date and time` : "Time is missing" });

  let target: ImportTarget | undefined;
  const label = cell("target")?.trim();
  // an unknown target explains the missing distance or reflectance too: say it once
  let unknownTarget = false;
  if (label) {
    target = targets.find((t) => t.label.toLowerCase() === label.toLowerCase());
    if (!target) {
      unknownTarget = true;
      errors.push({ field: "target", message: `Target “${label}” is not one of this site's targets` });
    }
  }

  const range = number("rangeM", "Sensor range", (v) => (v > 0 ? null : "must be above 0"));
  if (range == null && !errors.some((e) => e.field === "rangeM")) errors.push({ field: "rangeM", message: "Sensor range is missing" });
  // ranging.md §9, in the words POST /api/sync uses for readings.rangesM / reference.distanceM
  if (range != null && toMetres(range, mapping._rangeUnit) > MAX_DISTANCE_M) errors.push({ field: "rangeM", message: distanceBoundsMessage("range") });

  const distance = number("distanceM", "Reference distance", (v) => (v > 0 ? null : "must be above 0"));
  if (distance != null && toMetres(distance, mapping._distanceUnit) > MAX_DISTANCE_M) errors.push({ field: "distanceM", message: distanceBoundsMessage("reference distance") });
  let distanceM = distance == null ? null : toMetres(distance, mapping._distanceUnit);
  if (distanceM == null && !unknownTarget && !errors.some((e) => e.field === "distanceM")) {
    if (target?.referenceM != null) distanceM = target.referenceM;
    else
      errors.push({
        field: "distanceM",
        message: target ? `Reference distance is missing and target “${target.label}” has no surveyed distance` : "Reference distance is missing (map a column or a target with a surveyed distance)",
      });
  }

  let reflectancePct = number("reflectancePct", "Reflectance", (v) => (v >= 0 && v <= 100 ? null : "must lie between 0 and 100 %"));
  if (reflectancePct == null && !unknownTarget && !errors.some((e) => e.field === "reflectancePct")) {
    if (target) reflectancePct = target.reflectancePct;
    else errors.push({ field: "reflectancePct", message: "Reflectance is missing (map a column or a target)" });
  }

  const illuminanceKlux = number("illuminanceKlux", "Illuminance", (v) => (v >= 0 && v <= 200 ? null : "must lie between 0 and 200 klux"));
  const incidenceDeg = number("incidenceDeg", "Incidence angle", (v) => (v >= 0 && v < 90 ? null : "must lie between 0 and 90°"));
  const lat = number("lat", "Latitude", (v) => (Math.abs(v) <= 90 ? null : "must lie between −90 and 90°"));
  const lon = number("lon", "Longitude", (v) => (Math.abs(v) <= 180 ? null : "must lie between −180 and 180°"));
  const accuracyM = number("accuracyM", "GPS accuracy", (v) => (v >= 0 ? null : "must not be negative"));
  if ((lat == null) !== (lon == null) && !errors.some((e) => e.field === "lat" || e.field === "lon")) {
    errors.push({ field: lat == null ? "lat" : "lon", message: "Latitude and longitude come together" });
  }

  if (errors.length) return { ok: false, errors };
  const note = cell("note")?.trim();
  return {
    ok: true,
    shot: {
      takenAt: takenAt!,
      ...(target ? { targetId: target.id } : {}),
      reference: { distanceM: distanceM!, method: "edm" },
      readings: { rangesM: [toMetres(range!, mapping._rangeUnit)] },
      reflectancePct: reflectancePct!,
      illuminanceKlux: illuminanceKlux ?? null,
      ...(incidenceDeg != null ? { incidenceDeg } : {}),
      ...(lat != null && lon != null ? { position: { lat, lon, ...(accuracyM != null ? { accuracyM } : {}) } } : {}),
      ...(note ? { note } : {}),
    },
  };
}

/** What the preview shows for a row, and whether it goes with "Import". */
export type RowClass =
  | { kind: "error"; errors: RowError[] }
  /** Accepted by the server, but a unit slip is likely: imported only once the user confirms. */
  | { kind: "implausible"; errorMm: number; message: string }
  | { kind: "ready"; errorMm: number | null };

export const IMPLAUSIBLE_MESSAGE = "implausible — mm typed as m?";

/** A ranging-core path of a mapped row → the import field it came from. */
function importFieldOf(path: string): string {
  if (path.startsWith("readings.")) return "rangeM";
  if (path.startsWith("reference.")) return "distanceM";
  return path;
}

/**
 * A mapped row judged as the server would: the ranging core's own checks (a reading beyond the
 * physics bounds is an error with the server's message) and the "mm typed as m?" flag of
 * ranging.md §9 (|error| > 1000 mm with a reference above 1 m). Without a sensor the error is
 * the plain difference of range and reference, enough to see a unit slip.
 */
export function classifyRow(m: MappedRow, sensor?: SensorSpec | null, air: AirInput = {}): RowClass {
  if (!m.ok) return { kind: "error", errors: m.errors };
  const referenceM = m.shot.reference.distanceM;
  let errorMm: number;
  if (sensor) {
    try {
      errorMm = computeShot({ sensor, air, reference: m.shot.reference, readings: m.shot.readings, rule: DEFAULT_RULE }).errorMm;
    } catch (e) {
      if (!(e instanceof DomainError)) throw e;
      return { kind: "error", errors: [{ field: importFieldOf(e.path), message: e.message }] };
    }
  } else {
    errorMm = (m.shot.readings.rangesM[0]! - referenceM) * 1000;
  }
  if (isImplausible(errorMm, referenceM)) return { kind: "implausible", errorMm, message: IMPLAUSIBLE_MESSAGE };
  return { kind: "ready", errorMm };
}

/** A column whose header looks like the field, for a first guess when no mapping is saved. */
export function guessMapping(headers: string[]): ImportMapping {
  const find = (...words: RegExp[]) => headers.find((h) => words.some((w) => w.test(h)));
  const m: ImportMapping = {
    takenAt: find(/time/i, /date/i),
    rangeM: find(/^range/i, /measured/i, /sensor/i),
    distanceM: find(/ref/i, /true/i, /known/i),
    target: find(/target/i, /board/i),
    reflectancePct: find(/reflect/i, /albedo/i),
    illuminanceKlux: find(/lux/i, /illum/i),
    incidenceDeg: find(/incid/i, /angle/i),
    lat: find(/^lat/i),
    lon: find(/^lon/i, /^lng/i),
    accuracyM: find(/accur/i, /hdop/i),
    note: find(/note/i, /comment/i),
  };
  for (const k of Object.keys(m) as (keyof ImportMapping)[]) if (m[k] === undefined) delete m[k];
  return m;
}
