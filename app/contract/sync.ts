// The POST /api/sync body of api.md (the product specification) as zod schemas. Pure (no server imports):
// the field tablet validates a record with the same schema before it queues it, and the
// server validates every record again on ingest. The record types of both sides derive from here. Unknown keys are stripped, so numbers the
// tablet derived (errorMm, within, limitMm…) never reach the server's computation.
// zod/mini (the functional form of zod 4): this module is in the field tablet's bundle, and the
// chained form carries all of zod with it (the field screen's JavaScript budget, tests/bench/field.bench.ts).
import * as z from "zod/mini";
import { AIR_LIMITS, distanceBoundsMessage, MAX_DISTANCE_M, MAX_FREQUENCIES, MAX_ROUND_TRIP_NS, roundTripBoundsMessage, type Readings } from "~/domain";
import { issuesToErrors, type FieldError } from "./errors";

export { issuesToErrors };

/** At most this many shots in one request (api.md); more answers 413. */
export const SYNC_MAX_SHOTS = 500;
/** Sessions are small; the same cap keeps one request bounded. */
export const SYNC_MAX_SESSIONS = 500;

/** An error of one record of the body: the codebase's one field-error shape. */
export type RecordError = FieldError;
export type SyncResult = {
  kind: "session" | "shot";
  id: string;
  status: "accepted" | "duplicate" | "rejected";
  errors?: RecordError[];
};

const num = (what: string) => z.number({ error: `${what} must be a number` });
/** A number within [lo, hi], one message for both ends. */
const between = (what: string, lo: number, hi: number, message: string) => num(what).check(z.gte(lo, message), z.lte(hi, message));
const text = (what: string, max: number) =>
  z.string({ error: `${what} must be text` }).check(z.trim(), z.minLength(1, `${what} is required`), z.maxLength(max, `${what} is at most ${max} characters`));
const recordId = (what: string) => z.uuid({ error: `${what} must be a UUID made by the tablet` });
/** ISO 8601 with an offset ("Z" or ±hh:mm), as api.md asks. */
const isoTime = (what: string) => z.iso.datetime({ offset: true, error: `${what} must be an ISO 8601 time with an offset, e.g. 2026-05-04T08:10:00+02:00` });
/** null and absent mean the same (not measured); canonicalJson drops both, so the raw matches. */
const optionalNum = (schema: z.ZodMiniNumber<number>) => z.nullish(schema);
const optionalText = (what: string, max: number) => z.nullish(z.string({ error: `${what} must be text` }).check(z.maxLength(max, `${what} is at most ${max} characters`)));

const airNum = (field: keyof typeof AIR_LIMITS, what: string, unit: string) => {
  const [lo, hi] = AIR_LIMITS[field];
  return optionalNum(between(what, lo, hi, `${what} must lie between ${lo} and ${hi} ${unit}`));
};

export const syncSessionSchema = z.object(
  {
    id: recordId("session id"),
    sensorId: text("sensor", 100),
    siteId: text("site", 100),
    /** Not in api.md's example: optional; without it the server picks the one project listing both the sensor and the site. */
    projectId: optionalText("project", 100),
    startedAt: isoTime("start time"),
    airTempC: airNum("airTempC", "air temperature", "°C"),
    pressureHpa: airNum("pressureHpa", "air pressure", "hPa"),
    humidityPct: airNum("humidityPct", "relative humidity", "%"),
    note: optionalText("note", 2000),
  },
  { error: "a session must be an object" },
);
export type SyncSession = z.infer<typeof syncSessionSchema>;
/** A session as the tablet builds, stores and sends it (the body's input shape). */
export type SessionRecord = z.input<typeof syncSessionSchema>;

// ranging.md §9: lengths in (0, 10 000] m, in the ranging core's own words
const positiveM = (what: string) => num(what).check(z.positive(distanceBoundsMessage(what)), z.lte(MAX_DISTANCE_M, distanceBoundsMessage(what)));
const heightM = (what: string) => between(what, -100, 100, `${what} must lie between −100 and 100 m`);

export const tapeUseSchema = z.object(
  {
    tapeId: text("tape", 100),
    tempC: between("tape temperature", -80, 90, "tape temperature must lie between −80 and 90 °C"),
    tensionN: num("tape pull").check(z.positive("tape pull must be greater than 0 N"), z.lte(1000, "tape pull must be at most 1000 N")),
    support: z.enum(["ground", "ends"], { error: 'support must be "ground" or "ends"' }),
    spans: z._default(z.int({ error: "spans must be a whole number" }).check(z.gte(1, "spans must be at least 1"), z.lte(100, "spans must be at most 100")), 1),
  },
  { error: "tape must be an object" },
);

/** issue 15: the shot's own standard uncertainty of its reference (mm, k = 1; ranging.md §7). */
const refUncertainty = optionalNum(num("reference uncertainty").check(z.gte(0, "reference uncertainty must not be negative"), z.lte(1000, "reference uncertainty must be at most 1000 mm")));

export const referenceSchema = z.discriminatedUnion(
  "method",
  [
    z.object({ method: z.literal("edm"), distanceM: positiveM("reference distance"), uncertaintyMm: refUncertainty, edmId: optionalText("reference EDM", 100) }),
    z.object({ method: z.literal("tape"), distanceM: positiveM("taped distance"), tape: tapeUseSchema, uncertaintyMm: refUncertainty }),
    // distanceM is not read for coordinates: the server computes it from the surveyed positions.
    z.object({
      method: z.literal("coordinates"),
      stationId: text("station", 100),
      instrumentHeightM: heightM("instrument height"),
      targetHeightM: heightM("target height"),
      uncertaintyMm: refUncertainty,
    }),
  ],
  { error: 'reference method must be "tape", "edm" or "coordinates"' },
);

const readingList = (what: string, max: number, message: string) =>
  z
    .array(num(what).check(z.positive(message), z.lte(max, message)), { error: `${what}s must be a list of numbers` })
    .check(z.minLength(1, `give at least one ${what}`), z.maxLength(1000, `at most 1000 ${what}s`));

const readingsObject = z
  .object(
    {
      rangesM: z.optional(readingList("range", MAX_DISTANCE_M, distanceBoundsMessage("range"))),
      roundTripNs: z.optional(readingList("round-trip time", MAX_ROUND_TRIP_NS, roundTripBoundsMessage())),
      phase: z.optional(
        z
          .array(
            z.object(
              {
                frequencyHz: num("modulation frequency").check(z.positive("modulation frequency must be greater than 0 Hz")),
                samples: z
                  .array(num("sample"), { error: "samples must be a list of numbers" })
                  .check(z.minLength(3, "at least 3 correlation samples are needed"), z.maxLength(1024, "at most 1024 samples")),
              },
              { error: "a frequency reading must be an object" },
            ),
            { error: "phase must be a list of frequency readings" },
          )
          .check(z.minLength(1, "give at least one frequency reading"), z.maxLength(MAX_FREQUENCIES, `at most ${MAX_FREQUENCIES} modulation frequencies a shot`)),
      ),
    },
    { error: "readings must be an object" },
  )
  .check(
    z.superRefine((r, ctx) => {
      const n = [r.rangesM, r.roundTripNs, r.phase].filter((x) => x != null).length;
      if (n !== 1) ctx.addIssue({ code: "custom", message: "readings must hold exactly one of rangesM, roundTripNs or phase" });
    }),
  );
// One object checked whole (rather than z.union) keeps the per-reading paths and the "exactly
// one" message of api.md; the output is the ranging core's own union, so no cast downstream.
export const readingsSchema = z.pipe(
  readingsObject,
  z.transform((r: z.output<typeof readingsObject>): Readings => (r.rangesM ? { rangesM: r.rangesM } : r.roundTripNs ? { roundTripNs: r.roundTripNs } : { phase: r.phase! })),
);

const angle = (what: string) => between(what, 0, 90, `${what} must lie between 0 and 90°`);

export const syncShotSchema = z.object(
  {
    id: recordId("shot id"),
    sessionId: recordId("session id"),
    takenAt: isoTime("time of the shot"),
    targetId: optionalText("target", 100),
    reference: referenceSchema,
    readings: readingsSchema,
    reflectancePct: between("reflectance", 0, 100, "reflectance must lie between 0 and 100 %"),
    // Required by api.md; null is accepted for "not measured" (no lux meter at hand).
    illuminanceKlux: z.nullable(between("illuminance", 0, 200, "illuminance must lie between 0 and 200 klux")),
    incidenceDeg: optionalNum(angle("incidence angle")),
    position: z.nullish(
      z.object(
        {
          lat: between("latitude", -90, 90, "latitude must lie between −90 and 90°"),
          lon: between("longitude", -180, 180, "longitude must lie between −180 and 180°"),
          accuracyM: optionalNum(num("position accuracy").check(z.gte(0, "position accuracy must not be negative"))),
        },
        { error: "position must be an object with lat and lon" },
      ),
    ),
    note: optionalText("note", 2000),
    // issue 18: a shot made from a scan or depth frames (ranging.md §8) carries how it was measured
    scan: z.nullish(
      z.object(
        {
          points: z.int({ error: "scan points must be a whole number" }).check(z.gte(3, "a plane needs at least 3 points")),
          planeRmsMm: num("plane RMS").check(z.gte(0, "plane RMS must not be negative")),
          incidenceDeg: between("scan incidence angle", 0, 90, "incidence angle must lie between 0 and 90°"),
          fileSha256: z.string({ error: "file hash must be text" }).check(z.regex(/^[0-9a-f]{64}$/, "file hash must be a SHA-256 in 64 lower-case hex digits")),
        },
        { error: "scan must be an object" },
      ),
    ),
  },
  { error: "a shot must be an object" },
);
export type SyncShot = z.infer<typeof syncShotSchema>;

type ReferenceIn = z.input<typeof referenceSchema>;
type Members<M extends ReferenceIn["method"]> = Omit<Extract<ReferenceIn, { method: M }>, "method">;
/**
 * A reference as the tablet's form fills it in: the method and the members of every method,
 * each optional (the schema above decides which ones a method needs).
 */
export type ReferenceRecord = { method: ReferenceIn["method"] } & Partial<Members<"edm"> & Members<"tape"> & Members<"coordinates">>;
export type TapeUse = z.input<typeof tapeUseSchema>;
/** api.md v1.1 / ranging.md §8: what a shot made from a point cloud or depth frames carries. */
export type ScanFacts = NonNullable<SyncShot["scan"]>;
/** A shot as the tablet builds, stores and sends it: the body's input shape, readings as the ranging core's union. */
export type ShotRecord = Omit<z.input<typeof syncShotSchema>, "reference" | "readings"> & { reference: ReferenceRecord; readings: Readings };

/** The envelope only: records are validated one by one so a bad one never blocks the rest. */
export const syncEnvelopeSchema = z.object(
  {
    deviceId: text("device id", 200),
    sessions: z._default(z.array(z.unknown(), { error: "sessions must be a list" }), []),
    shots: z._default(z.array(z.unknown(), { error: "shots must be a list" }), []),
  },
  { error: "the body must be a JSON object with deviceId, sessions and shots" },
);

/** The reason a QA lead gives for excluding a shot or restoring it. */
export const exclusionSchema = z.object(
  {
    reason: z.string({ error: "Give a reason" }).check(z.trim(), z.minLength(3, "Give a reason of at least 3 characters"), z.maxLength(1000, "A reason is at most 1000 characters")),
  },
  { error: "Give a reason" },
);

export function validateSession(record: unknown) {
  const r = syncSessionSchema.safeParse(record);
  return r.success ? { ok: true as const, value: r.data } : { ok: false as const, errors: issuesToErrors(r.error.issues) };
}

export function validateShot(record: unknown) {
  const r = syncShotSchema.safeParse(record);
  return r.success ? { ok: true as const, value: r.data } : { ok: false as const, errors: issuesToErrors(r.error.issues) };
}

/**
 * JSON with keys in sorted order at every depth, so the same record in another key order
 * compares equal; null and absent (undefined) members are left out alike. A copy with its
 * keys inserted in sorted order goes through the native JSON.stringify (a few times faster
 * than writing the text here); an object with array-index-like keys, which every JS object
 * lists first whatever their insertion order, is written by hand instead.
 */
export function canonicalJson(value: unknown): string {
  try {
    return JSON.stringify(sortedCopy(value) ?? null) ?? "null";
  } catch (e) {
    if (e !== INDEX_KEY) throw e;
    return write(value) ?? "null";
  }
}

const INDEX_KEY = Symbol("index-like key");
const isIndexKey = (k: string) => /^(?:0|[1-9]\d*)$/.test(k) && Number(k) < 4294967295;

function sortedCopy(v: unknown): unknown {
  if (v === null || v === undefined || typeof v !== "object") return v;
  if (Array.isArray(v)) {
    // a list of numbers or text (readings, samples) is written as it is: nothing to reorder
    let plain = true;
    for (let i = 0; i < v.length && plain; i++) {
      const t = typeof v[i];
      plain = t === "number" || t === "string" || t === "boolean";
    }
    if (plain) return v;
    const out = new Array(v.length);
    for (let i = 0; i < v.length; i++) {
      const x = v[i];
      out[i] = x === undefined ? null : sortedCopy(x);
    }
    return out;
  }
  const keys = Object.keys(v).sort();
  const out: Record<string, unknown> = {};
  for (const k of keys) {
    const x = (v as Record<string, unknown>)[k];
    // left out as JSON.stringify leaves them out of an object (a toJSON function would run)
    if (x === null || x === undefined || typeof x === "function" || typeof x === "symbol") continue;
    const c = sortedCopy(x);
    if (isIndexKey(k)) throw INDEX_KEY;
    if (k === "__proto__") Object.defineProperty(out, k, { value: c, enumerable: true, writable: true, configurable: true });
    else out[k] = c;
  }
  return out;
}

/** The same text written directly (keys sorted at every depth, null and absent left out). */
function write(v: unknown): string | undefined {
  if (v === null || v === undefined) return undefined;
  if (typeof v !== "object") return JSON.stringify(v);
  if (Array.isArray(v)) {
    let out = "[";
    for (let i = 0; i < v.length; i++) out += (i ? "," : "") + (write(v[i]) ?? "null");
    return out + "]";
  }
  const keys = Object.keys(v).sort();
  let out = "{";
  let first = true;
  for (const k of keys) {
    const x = write((v as Record<string, unknown>)[k]);
    if (x === undefined) continue;
    out += (first ? "" : ",") + JSON.stringify(k) + ":" + x;
    first = false;
  }
  return out + "}";
}

/** A record id as the answer names it, even when the record itself was malformed. */
export function recordIdOf(record: unknown): string {
  const id = record && typeof record === "object" ? (record as { id?: unknown }).id : undefined;
  return typeof id === "string" ? id : "";
}
