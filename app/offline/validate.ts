// Checks a record before it is queued, with the same paths the server answers with, so a
// message lands on the same field whether it came from the tablet or from POST /api/sync.
// Two passes: the form's own schema below (plain "Enter …" words for blank boxes), then the
// server's schema itself (app/contract/sync.ts), which has the last word.
// zod/mini, as app/contract/sync.ts: the chained form would carry all of zod into the field bundle.
import * as z from "zod/mini";
import { validateSession, validateShot } from "~/contract";
import type { FieldError, SyncSessionRecord, SyncShotRecord } from "./types";

const finite = (what: string) => z.number({ error: (i) => (i.input === undefined ? `Enter ${what}` : `${what[0]!.toUpperCase()}${what.slice(1)} must be a number`) });
/** A number within [lo, hi], one message for both ends. */
const within = (what: string, lo: number, hi: number, message: string) => finite(what).check(z.gte(lo, message), z.lte(hi, message));
const above0 = (what: string, message: string) => finite(what).check(z.positive(message));
const uuid = z.string({ error: "An id must be a UUID" }).check(z.regex(/^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i, "An id must be a UUID"));
const iso = z.string({ error: "Give the time as ISO 8601" }).check(z.refine((s) => !Number.isNaN(Date.parse(s)), "Give the time as ISO 8601"));
const note = z.optional(z.string({ error: "The note must be text" }).check(z.maxLength(2000, "Keep the note to 2000 characters")));
const chosen = (message: string) => z.string({ error: message }).check(z.minLength(1, message));

export const sessionRecordSchema = z.object({
  id: uuid,
  sensorId: chosen("Choose the sensor"),
  siteId: chosen("Choose the site"),
  projectId: z.optional(chosen("Choose the project")),
  startedAt: iso,
  airTempC: z.optional(within("the air temperature (°C)", -80, 70, "Air temperature lies between −80 and 70 °C")),
  pressureHpa: z.optional(within("the pressure (hPa)", 300, 1200, "Pressure lies between 300 and 1200 hPa")),
  humidityPct: z.optional(within("the humidity (%)", 0, 100, "Humidity lies between 0 and 100 %")),
  note,
});

const positiveList = (what: string) => z.array(above0(what, `${what[0]!.toUpperCase()}${what.slice(1)} must be above 0`)).check(z.minLength(1, `Enter at least one ${what}`));

const shotObject = z.object({
  id: uuid,
  sessionId: uuid,
  takenAt: iso,
  targetId: z.optional(chosen("Choose the target")),
  reference: z.object({
    distanceM: z.optional(above0("the reference distance (m)", "The reference distance must be above 0 m")),
    method: z.enum(["tape", "edm", "coordinates"], { error: "Say how the reference distance was measured" }),
    tape: z.optional(
      z.object({
        tapeId: chosen("Choose the tape"),
        tempC: within("the tape temperature (°C)", -50, 70, "Tape temperature lies between −50 and 70 °C"),
        tensionN: above0("the pull (N)", "The pull must be above 0 N"),
        support: z.enum(["ground", "ends"], { error: "Say how the tape was supported" }),
        spans: z.int({ error: "Spans are a whole number" }).check(z.gte(1, "At least one span")),
      }),
    ),
    stationId: z.optional(chosen("Choose the station the sensor stands on")),
    instrumentHeightM: z.optional(finite("the instrument height (m)")),
    targetHeightM: z.optional(finite("the target height (m)")),
  }),
  readings: z.union([
    z.object({ rangesM: positiveList("sensor range (m)") }),
    z.object({ roundTripNs: positiveList("round-trip time (ns)") }),
    z.object({
      phase: z
        .array(
          z.object({
            frequencyHz: above0("the modulation frequency (Hz)", "The modulation frequency must be above 0 Hz"),
            samples: z.array(finite("a correlation sample")).check(z.minLength(3, "Enter at least 3 correlation samples")),
          }),
        )
        .check(z.minLength(1, "Enter the samples of at least one frequency")),
    }),
  ]),
  reflectancePct: within("the reflectance (%)", 0, 100, "Reflectance lies between 0 and 100 %"),
  illuminanceKlux: finite("the illuminance (klux)").check(z.gte(0, "Illuminance must be 0 klux or more"), z.lte(200, "Illuminance is at most 200 klux")),
  incidenceDeg: z.optional(within("the incidence angle (°)", 0, 90, "The incidence angle lies between 0 and 90°")),
  position: z.optional(
    z.object({
      lat: within("the latitude (°)", -90, 90, "Latitude lies between −90 and 90°"),
      lon: within("the longitude (°)", -180, 180, "Longitude lies between −180 and 180°"),
      accuracyM: z.optional(finite("the position accuracy (m)").check(z.gte(0, "The position accuracy must not be negative"))),
    }),
  ),
  note,
});

export const shotRecordSchema = shotObject.check(
  z.superRefine(
    (s: z.output<typeof shotObject>, ctx) => {
      const r = s.reference ?? ({} as Partial<typeof s.reference>);
      if (r.method === "coordinates") {
        if (!r.stationId) ctx.addIssue({ code: "custom", path: ["reference", "stationId"], message: "Choose the station the sensor stands on" });
        if (!s.targetId) ctx.addIssue({ code: "custom", path: ["targetId"], message: "Choose the target: its coordinates give the distance" });
        if (r.instrumentHeightM === undefined) ctx.addIssue({ code: "custom", path: ["reference", "instrumentHeightM"], message: "Enter the instrument height (m)" });
        if (r.targetHeightM === undefined) ctx.addIssue({ code: "custom", path: ["reference", "targetHeightM"], message: "Enter the target height (m)" });
      } else if (r.distanceM === undefined && r.method) {
        ctx.addIssue({ code: "custom", path: ["reference", "distanceM"], message: "Enter the reference distance (m)" });
      }
      if (r.method === "tape" && !r.tape) ctx.addIssue({ code: "custom", path: ["reference", "tape", "tapeId"], message: "Choose the tape" });
    },
    { when: (p) => typeof p.value === "object" && p.value !== null },
  ),
);

function toErrors(issues: z.core.$ZodIssue[], readings?: object): FieldError[] {
  return issues.flatMap((i) => {
    if (i.code === "invalid_union" && i.path.join(".") === "readings" && readings) {
      // Report only the branch of the readings actually given (ranges, round-trip times or phase).
      const branch = "rangesM" in readings ? 0 : "roundTripNs" in readings ? 1 : "phase" in readings ? 2 : -1;
      const inner = branch >= 0 ? i.errors[branch] : undefined;
      if (inner) return inner.map((e) => ({ path: ["readings", ...e.path.map(String)].join("."), message: e.message }));
      return [{ path: "readings", message: "Enter the sensor's readings" }];
    }
    return [{ path: i.path.map(String).join("."), message: i.message }];
  });
}

const cap = (e: FieldError) => ({ path: e.path, message: e.message.charAt(0).toUpperCase() + e.message.slice(1) });

export function checkSessionRecord(r: SyncSessionRecord): FieldError[] {
  const res = sessionRecordSchema.safeParse(r);
  if (!res.success) return toErrors(res.error.issues);
  const server = validateSession(r);
  return server.ok ? [] : server.errors.map(cap);
}

export function checkShotRecord(r: SyncShotRecord): FieldError[] {
  const res = shotRecordSchema.safeParse(r);
  if (!res.success) return toErrors(res.error.issues, r.readings ?? {});
  const server = validateShot(r);
  return server.ok ? [] : server.errors.map(cap);
}
