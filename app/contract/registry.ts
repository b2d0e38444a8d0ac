// The registry's zod schemas: one per entity, shared by the admin forms (client and server,
// through Conform) and by the JSON API (POST /api/sensors, /api/tapes, /api/sites; api.md).
// Pure: no server imports, so the browser bundle may load it.
import { parseWithZod } from "@conform-to/zod/v4";
import { configureCoercion } from "@conform-to/zod/v4/future";
import { z } from "zod";
import { issuesToErrors, type FieldError } from "./errors";

export { issuesToErrors, type FieldError };

// ---------- small builders with plain messages ----------
const given = (input: unknown) => input !== undefined && input !== null;

/** A required number; the message names what is missing or wrong. */
export function num(what: string) {
  return z.number({
    error: (iss) => (given(iss.input) ? `${cap(what)} must be a number (use a point for decimals)` : `Enter ${what}`),
  });
}

function cap(s: string) {
  return s.charAt(0).toUpperCase() + s.slice(1);
}

/**
 * Control characters (C0, DEL, C1) in a label: line breaks and escape codes would spoil CSV
 * rows, mail subjects and terminal output, and are invisible on screen (issue 11).
 */
export const CONTROL_CHARS = /[\u0000-\u001f\u007f-\u009f]/;
export const noControlMessage = (what: string) => `Remove the tabs, line breaks or other control characters from ${what}`;

function text(what: string, max = 80) {
  return z
    .string({ error: (iss) => (given(iss.input) ? `${cap(what)} must be text` : `Enter ${what}`) })
    .trim()
    .min(1, `Enter ${what}`)
    .max(max, `Keep ${what} to ${max} characters`)
    .refine((s) => !CONTROL_CHARS.test(s), noControlMessage(what));
}

function yesNo(what: string) {
  return z.boolean({ error: `Say whether ${what}` });
}

const notes = z.string().trim().max(2000, "Keep the notes to 2000 characters").optional();

export const ID_PATTERN = /^[A-Za-z0-9._:-]+$/;
export const idSchema = z
  .string({ error: "An id must be text" })
  .trim()
  .min(1, "An id must not be empty")
  .max(100, "Keep an id to 100 characters")
  .regex(ID_PATTERN, "Use letters, digits, dot, dash, underscore or colon in an id");

const isoDate = z
  .string({ error: "Give the date as YYYY-MM-DD" })
  .regex(/^\d{4}-\d{2}-\d{2}$/, "Give the date as YYYY-MM-DD")
  .refine((s) => {
    const d = new Date(`${s}T00:00:00Z`);
    return !Number.isNaN(d.getTime()) && d.toISOString().slice(0, 10) === s;
  }, "This date does not exist");

export const gridSchema = z.object({
  e: num("the easting (m)"),
  n: num("the northing (m)"),
  h: num("the height (m)"),
});

export const geoSchema = z.object({
  lat: num("the latitude (°)").min(-90, "Latitude lies between −90 and 90°").max(90, "Latitude lies between −90 and 90°"),
  lon: num("the longitude (°)").min(-180, "Longitude lies between −180 and 180°").max(180, "Longitude lies between −180 and 180°"),
  h: num("the ellipsoidal height (m)"),
});

/** A form row whose coordinate boxes are all left empty means "no coordinates". */
function blankToUndefined(v: unknown) {
  if (v && typeof v === "object" && !Array.isArray(v)) {
    const values = Object.values(v as Record<string, unknown>);
    if (values.every((x) => x === undefined || x === null || (typeof x === "string" && x.trim() === ""))) return undefined;
  }
  return v;
}
const optionalGrid = z.preprocess(blankToUndefined, gridSchema.optional());
const optionalGeo = z.preprocess(blankToUndefined, geoSchema.optional());

// ---------- issue 15: certificates, laser class, uncertainties (ranging.md §7) ----------
/** A calibration certificate; the form's four boxes left empty mean "none". */
export const certificateSchema = z
  .object({
    number: text("the certificate number"),
    laboratory: text("the calibration laboratory", 120),
    issued: isoDate,
    due: isoDate,
  })
  .superRefine((c, ctx) => {
    if (typeof c.issued === "string" && typeof c.due === "string" && c.due < c.issued) {
      ctx.addIssue({ code: "custom", path: ["due"], message: "The due date must not come before the issue date" });
    }
  });
export type Certificate = z.output<typeof certificateSchema>;
const optionalCertificate = z.preprocess(blankToUndefined, certificateSchema.nullable().optional());

export const LASER_CLASS_OPTIONS = ["1", "1M", "2", "2M", "3R", "3B", "4"] as const;

/** Blank form box → undefined, so an optional number can be left empty. */
function blankNumber(v: unknown) {
  return typeof v === "string" && v.trim() === "" ? undefined : v;
}
const uncertaintyMm = (what: string) => z.preprocess(blankNumber, num(what).min(0, "An uncertainty is 0 or more").max(10000, "An uncertainty is at most 10000").nullable().optional());

/** The row's certificate columns → the API's certificate object (null when none). */
export function certificateOf(r: { certNumber: string | null; certLaboratory: string | null; certIssued: string | null; certDue: string | null }): Certificate | null {
  if (!r.certNumber && !r.certDue) return null;
  return { number: r.certNumber ?? "", laboratory: r.certLaboratory ?? "", issued: r.certIssued ?? "", due: r.certDue ?? "" };
}
export function certificateColumns(c: Certificate | null | undefined) {
  return { certNumber: c?.number ?? null, certLaboratory: c?.laboratory ?? null, certIssued: c?.issued ?? null, certDue: c?.due ?? null };
}

/** Cross-field checks run even when other fields failed, so every field shows its message at once. */
const ALWAYS = { when: (p: { value: unknown }) => typeof p.value === "object" && p.value !== null };

// ---------- sensors ----------
export const SENSOR_KINDS = ["pulsed", "cw"] as const;
export const SENSOR_KIND_LABEL: Record<(typeof SENSOR_KINDS)[number], string> = {
  pulsed: "Pulsed (time of flight)",
  cw: "Continuous-wave (phase)",
};

export const sensorSchema = z
  .object({
    id: idSchema.optional(),
    label: text("a label"),
    serial: text("the serial number"),
    kind: z.enum(SENSOR_KINDS, { error: 'Choose the kind: pulsed or continuous-wave ("pulsed" or "cw")' }),
    wavelengthNm: num("the laser wavelength (nm)").min(300, "The wavelength lies between 300 and 2000 nm").max(2000, "The wavelength lies between 300 and 2000 nm"),
    modulationHz: z
      .array(num("the modulation frequency (Hz)").positive("A modulation frequency must be above 0 Hz"), {
        error: "Modulation frequencies are a list of numbers (Hz)",
      })
      .max(8, "At most 8 modulation frequencies")
      .default([]),
    appliesAirCorrection: yesNo("the sensor applies its own air correction"),
    assumedRefractivity: num("the refractivity the sensor assumes (ppm)")
      .min(0, "The assumed refractivity lies between 0 and 1000 ppm (0 = vacuum)")
      .max(1000, "The assumed refractivity lies between 0 and 1000 ppm (0 = vacuum)")
      .default(0),
    toleranceMm: num("the constant part of the tolerance (mm)").min(0, "The tolerance must be 0 mm or more"),
    tolerancePpm: num("the distance part of the tolerance (ppm)").min(0, "The tolerance must be 0 ppm or more"),
    outdoor: yesNo("the sensor is used outdoors").default(true),
    calibrationDue: isoDate.nullable().optional(),
    notes,
    // issue 15
    laserClass: z.preprocess(
      (v) => (v === "" ? undefined : v),
      z.enum(LASER_CLASS_OPTIONS, { error: 'Choose the laser class (IEC 60825-1): "1", "1M", "2", "2M", "3R", "3B" or "4"' }).nullable().optional(),
    ),
    certificate: optionalCertificate,
    // issue 18: depth cameras (api.md v1.1): pinhole intrinsics in pixels, mm per depth unit
    intrinsics: z.preprocess(
      blankToUndefined,
      z
        .object({
          fx: num("the focal length fx (pixels)").positive("fx must be above 0 pixels"),
          fy: num("the focal length fy (pixels)").positive("fy must be above 0 pixels"),
          cx: num("the principal point cx (pixels)"),
          cy: num("the principal point cy (pixels)"),
        })
        .nullable()
        .optional(),
    ),
    depthScaleMm: num("the depth scale (mm per unit)").positive("The depth scale must be above 0 mm per unit").max(1000, "The depth scale is at most 1000 mm per unit").nullable().optional(),
  })
  .superRefine((s, ctx) => {
    if (s.kind === "cw" && Array.isArray(s.modulationHz) && s.modulationHz.length === 0) {
      ctx.addIssue({
        code: "custom",
        path: ["modulationHz"],
        message: "A continuous-wave sensor needs at least one modulation frequency (Hz)",
      });
    }
    if (s.toleranceMm === 0 && s.tolerancePpm === 0) {
      ctx.addIssue({ code: "custom", path: ["toleranceMm"], message: "A tolerance of ±(0 mm + 0 ppm) allows no error: give a or b above 0" });
    }
  }, ALWAYS);
export type SensorInput = z.input<typeof sensorSchema>;
export type SensorBody = z.output<typeof sensorSchema>;

// ---------- tapes ----------
export const tapeSchema = z.object({
  id: idSchema.optional(),
  label: text("a label"),
  standardTempC: num("the standard temperature (°C)").min(-50, "The standard temperature lies between −50 and 60 °C").max(60, "The standard temperature lies between −50 and 60 °C"),
  standardTensionN: num("the standard tension (N)").positive("The tension must be above 0 N").max(1000, "The tension is at most 1000 N"),
  areaMm2: num("the cross-section (mm²)").positive("The cross-section must be above 0 mm²").max(100, "The cross-section is at most 100 mm²"),
  modulusGPa: num("the modulus of elasticity (GPa)").positive("The modulus must be above 0 GPa").max(1000, "The modulus is at most 1000 GPa"),
  weightNPerM: num("the weight per metre (N/m)").positive("The weight must be above 0 N/m").max(50, "The weight is at most 50 N/m"),
  calibrationPpm: num("the certificate correction (ppm)")
    .min(-1000, "The certificate correction lies between −1000 and 1000 ppm")
    .max(1000, "The certificate correction lies between −1000 and 1000 ppm")
    .default(0),
  notes,
  // issue 15: the certificate's standard uncertainty (k = 1) a + b·L
  uncertaintyMm: uncertaintyMm("the certificate uncertainty (mm)"),
  uncertaintyPpm: uncertaintyMm("the certificate uncertainty (ppm)"),
  certificate: optionalCertificate,
});
export type TapeInput = z.input<typeof tapeSchema>;
export type TapeBody = z.output<typeof tapeSchema>;

// ---------- sites, stations, targets ----------
export const targetSchema = z.object({
  id: idSchema.optional(),
  label: text("the target's label", 40),
  reflectancePct: num("the reflectance (%)").min(0, "Reflectance lies between 0 and 100 %").max(100, "Reflectance lies between 0 and 100 %"),
  retro: yesNo("the target is retro-reflective").default(false),
  referenceM: num("the reference distance (m)").positive("The reference distance must be above 0 m").optional(),
  grid: optionalGrid,
  geo: optionalGeo,
  sigmaMm: uncertaintyMm("the point's standard uncertainty (mm)"),
});

export const stationSchema = z.object({
  id: idSchema.optional(),
  label: text("the station's label", 40),
  grid: optionalGrid,
  geo: optionalGeo,
  sigmaMm: uncertaintyMm("the point's standard uncertainty (mm)"),
});

function uniqueLabels(rows: { label?: unknown }[] | undefined, list: string, ctx: z.RefinementCtx) {
  const seen = new Set<string>();
  if (!Array.isArray(rows)) return;
  rows.forEach((r, i) => {
    if (typeof r?.label !== "string") return;
    const key = r.label.trim().toLowerCase();
    if (seen.has(key)) ctx.addIssue({ code: "custom", path: [list, i, "label"], message: "Another row of this site has this label" });
    seen.add(key);
  });
}

export const siteSchema = z
  .object({
    id: idSchema.optional(),
    name: text("the site's name"),
    lat: num("the latitude (°)").min(-90, "Latitude lies between −90 and 90°").max(90, "Latitude lies between −90 and 90°").optional(),
    lon: num("the longitude (°)").min(-180, "Longitude lies between −180 and 180°").max(180, "Longitude lies between −180 and 180°").optional(),
    notes,
    targets: z.array(targetSchema, { error: "Targets are a list" }).min(1, "A site needs at least one target").max(200, "At most 200 targets"),
    stations: z.array(stationSchema, { error: "Stations are a list" }).max(50, "At most 50 stations").default([]),
  })
  .superRefine((s, ctx) => {
    if (s.lat !== undefined && s.lon === undefined) ctx.addIssue({ code: "custom", path: ["lon"], message: "Give the longitude with the latitude" });
    if (s.lon !== undefined && s.lat === undefined) ctx.addIssue({ code: "custom", path: ["lat"], message: "Give the latitude with the longitude" });
    uniqueLabels(s.targets, "targets", ctx);
    uniqueLabels(s.stations, "stations", ctx);
  }, ALWAYS);
export type SiteInput = z.input<typeof siteSchema>;
export type SiteBody = z.output<typeof siteSchema>;

// ---------- projects and their acceptance rule (ranging.md §6) ----------
export const DEFAULT_BAND_EDGES_M = [0, 10, 30, 100];

/** "0, 10, 30, 100" from a form box → [0, 10, 30, 100]; anything else passes through. */
function listFromText(v: unknown) {
  if (typeof v !== "string") return v;
  const parts = v.split(/[\s,;]+/).filter(Boolean);
  return parts.length === 0 ? undefined : parts.map((p) => (Number.isNaN(Number(p)) ? p : Number(p)));
}

export const projectSchema = z.object({
  id: idSchema.optional(),
  name: text("the project's name"),
  client: z
    .string()
    .trim()
    .max(120, "Keep the client's name to 120 characters")
    .refine((s) => !CONTROL_CHARS.test(s), noControlMessage("the client's name"))
    .default(""),
  notes,
  minShots: num("the minimum number of shots").int("The minimum number of shots is a whole number").min(2, "At least 2 shots (the spread needs two)").max(100000, "At most 100000 shots").default(20),
  coverageK: num("the coverage factor k").positive("The coverage factor must be above 0").max(10, "The coverage factor is at most 10").default(2),
  minWithinPct: num("the minimum share within tolerance (%)").min(0, "The share lies between 0 and 100 %").max(100, "The share lies between 0 and 100 %").default(95),
  rangeBandEdgesM: z
    .preprocess(
      listFromText,
      z
        .array(z.number({ error: "Range band edges are numbers in metres, e.g. 0, 10, 30, 100" }).min(0, "Range band edges are 0 m or more"), {
          error: "Range band edges are numbers in metres, e.g. 0, 10, 30, 100",
        })
        .min(1, "Give at least one range band edge (m)")
        .max(12, "At most 12 range band edges")
        .optional(),
    )
    .transform((v) => v ?? DEFAULT_BAND_EDGES_M)
    .superRefine((edges, ctx) => {
      if (edges[0] !== 0) ctx.addIssue({ code: "custom", message: "The first edge must be 0 m, so every shot falls in a band" });
      for (let i = 1; i < edges.length; i++)
        if (!(edges[i]! > edges[i - 1]!)) {
          ctx.addIssue({ code: "custom", message: "Range band edges must increase, e.g. 0, 10, 30, 100 m" });
          break;
        }
    }),
  sensorIds: z.array(idSchema, { error: "sensorIds is a list of sensor ids" }).default([]),
  siteIds: z.array(idSchema, { error: "siteIds is a list of site ids" }).default([]),
  // issue 14 (p14): optional, so a body written before them (the API, the seed) keeps the
  // project's tapes and EDMs as they are; the project form always sends them
  tapeIds: z.array(idSchema, { error: "tapeIds is a list of tape ids" }).optional(),
  edmIds: z.array(idSchema, { error: "edmIds is a list of reference EDM ids" }).optional(),
  // issue 15 (ranging.md §7)
  referenceRatio: z.preprocess(blankNumber, num("the reference ratio r").positive("The reference ratio must be above 0").max(20, "The reference ratio is at most 20").default(2)),
  referenceInVerdict: z.boolean({ error: "Say whether the reference test enters the verdict" }).default(false),
  statement: z.enum(["rmse", "nssda95"], { error: 'The statement is "rmse" or "nssda95"' }).default("rmse"),
  edmUncertaintyMm: uncertaintyMm("the EDM uncertainty (mm)"),
  edmUncertaintyPpm: uncertaintyMm("the EDM uncertainty (ppm)"),
});
export type ProjectInput = z.input<typeof projectSchema>;
export type ProjectBody = z.output<typeof projectSchema>;

// ---------- issue 15: reference EDMs (POST /api/edms) ----------
export const edmSchema = z.object({
  id: idSchema.optional(),
  label: text("a label"),
  serial: text("the serial number"),
  uncertaintyMm: num("the uncertainty (mm)").min(0, "An uncertainty is 0 or more").max(1000, "An uncertainty is at most 1000 mm"),
  uncertaintyPpm: z.preprocess(blankNumber, num("the uncertainty (ppm)").min(0, "An uncertainty is 0 or more").max(1000, "An uncertainty is at most 1000 ppm").default(0)),
  certificate: optionalCertificate,
  notes,
});
export type EdmInput = z.input<typeof edmSchema>;
export type EdmBody = z.output<typeof edmSchema>;

// ---------- results shared by the models and the API ----------
export type RegistryResult =
  { status: 201 | 200; body: { id: string; [k: string]: unknown } } | { status: 400; body: { error: string; errors: FieldError[] } } | { status: 409; body: { error: string } };
export type NotFound = { status: 404; body: { error: string } };

export function invalid(errors: FieldError[]): { status: 400; body: { error: string; errors: FieldError[] } } {
  const n = errors.length;
  return { status: 400, body: { error: n === 1 ? "1 field needs a fix" : `${n} fields need a fix`, errors } };
}

/** Field errors keyed the way Conform names fields ("targets[0].label"), for submission.reply(). */
export function toConformFieldErrors(errors: FieldError[]): Record<string, string[]> {
  const out: Record<string, string[]> = {};
  for (const e of errors) {
    const name = e.path.replace(/\.(\d+)(?=\.|$)/g, "[$1]");
    (out[name] ??= []).push(e.message);
  }
  return out;
}

// ---------- form parsing (client and server run the same) ----------
// Radios send "true"/"false" and checkboxes "on"; an unticked box sends nothing.
const { coerceFormValue } = configureCoercion({
  type: {
    boolean: (t: string) => {
      if (t === "on" || t === "true") return true;
      if (t === "false") return false;
      throw new Error("not a boolean");
    },
  },
});

export function parseRegistryForm<S extends z.ZodType>(formData: FormData, schema: S) {
  return parseWithZod(formData, { schema: coerceFormValue(schema), disableAutoCoercion: true });
}

// ---------- display helpers ----------
export function formatTolerance(toleranceMm: number, tolerancePpm: number) {
  return `±(${toleranceMm} mm + ${tolerancePpm} ppm)`;
}

/** "overdue" when the due date is before today (dates compared as YYYY-MM-DD, UTC). */
export function calibrationState(due: string | null | undefined, today = new Date().toISOString().slice(0, 10)) {
  if (!due) return "none" as const;
  if (due < today) return "overdue" as const;
  const days = (Date.parse(`${due}T00:00:00Z`) - Date.parse(`${today}T00:00:00Z`)) / 86400_000;
  return days <= 30 ? ("soon" as const) : ("ok" as const);
}

/** Key-sorted JSON, for "same content" checks of repeated API bodies. */
export function stableStringify(v: unknown): string {
  if (Array.isArray(v)) return `[${v.map(stableStringify).join(",")}]`;
  if (v && typeof v === "object") {
    const entries = Object.entries(v as Record<string, unknown>)
      .filter(([, x]) => x !== undefined)
      .sort(([a], [b]) => (a < b ? -1 : a > b ? 1 : 0));
    return `{${entries.map(([k, x]) => `${JSON.stringify(k)}:${stableStringify(x)}`).join(",")}}`;
  }
  return JSON.stringify(v ?? null);
}
