// Checks a record before it is queued, with the same paths the server answers with, so a
// message lands on the same field whether it came from the tablet or from POST /api/sync.
// Two passes: the form's own schema below (plain "Enter …" words for blank boxes), then the
// server's schema itself (app/contract/sync.ts), which has the last word.
import { z } from "zod";
import { validateSession, validateShot } from "~/contract";
import type { FieldError, SyncSessionRecord, SyncShotRecord } from "./types";

const finite = (what: string) => z.number({ error: (i) => (i.input === undefined ? `Enter ${what}` : `${what[0]!.toUpperCase()}${what.slice(1)} must be a number`) });
const uuid = z.string().regex(/^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i, "An id must be a UUID");
const iso = z.string().refine((s) => !Number.isNaN(Date.parse(s)), "Give the time as ISO 8601");
const note = z.string().max(2000, "Keep the note to 2000 characters").optional();

export const sessionRecordSchema = z.object({
  id: uuid,
  sensorId: z.string({ error: "Choose the sensor" }).min(1, "Choose the sensor"),
  siteId: z.string({ error: "Choose the site" }).min(1, "Choose the site"),
  projectId: z.string().min(1).optional(),
  startedAt: iso,
  airTempC: finite("the air temperature (°C)").min(-80, "Air temperature lies between −80 and 70 °C").max(70, "Air temperature lies between −80 and 70 °C").optional(),
  pressureHpa: finite("the pressure (hPa)").min(300, "Pressure lies between 300 and 1200 hPa").max(1200, "Pressure lies between 300 and 1200 hPa").optional(),
  humidityPct: finite("the humidity (%)").min(0, "Humidity lies between 0 and 100 %").max(100, "Humidity lies between 0 and 100 %").optional(),
  note,
});

const positiveList = (what: string) => z.array(finite(what).positive(`${what[0]!.toUpperCase()}${what.slice(1)} must be above 0`)).min(1, `Enter at least one ${what}`);

export const shotRecordSchema = z
  .object({
    id: uuid,
    sessionId: uuid,
    takenAt: iso,
    targetId: z.string().min(1).optional(),
    reference: z.object({
      distanceM: finite("the reference distance (m)").positive("The reference distance must be above 0 m").optional(),
      method: z.enum(["tape", "edm", "coordinates"], { error: "Say how the reference distance was measured" }),
      tape: z
        .object({
          tapeId: z.string({ error: "Choose the tape" }).min(1, "Choose the tape"),
          tempC: finite("the tape temperature (°C)").min(-50, "Tape temperature lies between −50 and 70 °C").max(70, "Tape temperature lies between −50 and 70 °C"),
          tensionN: finite("the pull (N)").positive("The pull must be above 0 N"),
          support: z.enum(["ground", "ends"], { error: "Say how the tape was supported" }),
          spans: z.number().int("Spans are a whole number").min(1, "At least one span"),
        })
        .optional(),
      stationId: z.string().min(1).optional(),
      instrumentHeightM: finite("the instrument height (m)").optional(),
      targetHeightM: finite("the target height (m)").optional(),
    }),
    readings: z.union([
      z.object({ rangesM: positiveList("sensor range (m)") }),
      z.object({ roundTripNs: positiveList("round-trip time (ns)") }),
      z.object({
        phase: z
          .array(
            z.object({
              frequencyHz: finite("the modulation frequency (Hz)").positive("The modulation frequency must be above 0 Hz"),
              samples: z.array(finite("a correlation sample")).min(3, "Enter at least 3 correlation samples"),
            }),
          )
          .min(1, "Enter the samples of at least one frequency"),
      }),
    ]),
    reflectancePct: finite("the reflectance (%)").min(0, "Reflectance lies between 0 and 100 %").max(100, "Reflectance lies between 0 and 100 %"),
    illuminanceKlux: finite("the illuminance (klux)").min(0, "Illuminance must be 0 klux or more").max(200, "Illuminance is at most 200 klux"),
    incidenceDeg: finite("the incidence angle (°)").min(0, "The incidence angle lies between 0 and 90°").max(90, "The incidence angle lies between 0 and 90°").optional(),
    position: z.object({ lat: finite("the latitude (°)").min(-90).max(90), lon: finite("the longitude (°)").min(-180).max(180), accuracyM: z.number().min(0).optional() }).optional(),
    note,
  })
  .superRefine(
    (s, ctx) => {
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
