// The text fields of POST /api/scans and POST /api/frames (api.md v1.1) as zod schemas, and the
// answer's row type. Pure: the import screens use the same types.
import { z } from "zod";
import { DEFAULT_MIN_POINTS, DEFAULT_SEARCH_RADIUS_M } from "~/domain";
import { referenceSchema, type RecordError, type SyncResult } from "./sync";

/** api.md: scans are streamed to disk up to 512 MB. */
export const SCAN_MAX_BYTES = 512 * 1024 * 1024;
/** Frames share the cap; at most this many PNGs in one request. */
export const FRAMES_MAX_FILES = 64;

const numberText = (what: string) =>
  z
    .string({ error: `${what} must be a number` })
    .trim()
    .refine((s) => s !== "" && Number.isFinite(Number(s)), `${what} must be a number`)
    .transform(Number);
const optionalNumber = (what: string, check: z.ZodNumber, dflt: number) =>
  z.preprocess((v) => (v === undefined || v === null || (typeof v === "string" && v.trim() === "") ? undefined : v), numberText(what).pipe(check).optional()).transform((v) => v ?? dflt);
const flag = z
  .preprocess((v) => (typeof v === "string" ? v.trim().toLowerCase() : v), z.enum(["true", "false", "1", "0", "on", ""]).optional())
  .transform((v) => v === "true" || v === "1" || v === "on");
const sessionId = z.uuid({ error: "sessionId must be the UUID of a synced session" });
const id = (what: string) =>
  z
    .string({ error: `${what} is required` })
    .trim()
    .min(1, `${what} is required`)
    .max(100, `${what} is at most 100 characters`);

export const scanFieldsSchema = z.object({
  sessionId,
  stationId: id("stationId"),
  instrumentHeightM: optionalNumber("instrumentHeightM", z.number().min(-100, "instrumentHeightM must lie between −100 and 100 m").max(100, "instrumentHeightM must lie between −100 and 100 m"), 0),
  searchRadiusM: optionalNumber("searchRadiusM", z.number().positive("searchRadiusM must be greater than 0 m").max(5, "searchRadiusM must be at most 5 m"), DEFAULT_SEARCH_RADIUS_M),
  minPoints: optionalNumber(
    "minPoints",
    z.number().int("minPoints must be a whole number").min(3, "minPoints must be at least 3").max(10_000_000, "minPoints is at most 10 000 000"),
    DEFAULT_MIN_POINTS,
  ),
  commit: flag,
  /** Not in api.md: the screens ask for each target's plot sample (left out otherwise). */
  plot: flag,
});
export type ScanFields = z.infer<typeof scanFieldsSchema>;

const boxText = z
  .string({ error: 'box must be "u0,v0,u1,v1" in pixels' })
  .trim()
  .regex(/^\d+\s*,\s*\d+\s*,\s*\d+\s*,\s*\d+$/, 'box must be "u0,v0,u1,v1": four whole pixel numbers')
  .transform((s) => {
    const [u0, v0, u1, v1] = s.split(",").map((x) => Number(x.trim()));
    return { u0, v0, u1, v1 };
  })
  .refine((b) => b.u0 <= b.u1 && b.v0 <= b.v1, "box must have u0 ≤ u1 and v0 ≤ v1");

export const frameFieldsSchema = z
  .object({
    sessionId,
    targetId: id("targetId"),
    box: boxText,
    referenceM: z.preprocess(
      (v) => (typeof v === "string" && v.trim() === "" ? undefined : v),
      numberText("referenceM").pipe(z.number().positive("referenceM must be greater than 0 m").max(10_000, "referenceM must be at most 10 000 m")).optional(),
    ),
    reference: z
      .preprocess((v) => (typeof v === "string" && v.trim() === "" ? undefined : v), z.string().optional())
      .transform((s, ctx) => {
        if (s === undefined) return undefined;
        try {
          return JSON.parse(s) as unknown;
        } catch {
          ctx.addIssue({ code: "custom", message: 'reference must be a JSON object, e.g. {"method":"edm","distanceM":3.2}' });
          return z.NEVER;
        }
      })
      .pipe(z.optional(referenceSchema)),
    frequencyHz: z.preprocess(
      (v) => (typeof v === "string" && v.trim() === "" ? undefined : v),
      numberText("frequencyHz").pipe(z.number().positive("frequencyHz must be greater than 0 Hz")).optional(),
    ),
    minPoints: optionalNumber("minPoints", z.number().int("minPoints must be a whole number").min(3, "minPoints must be at least 3"), DEFAULT_MIN_POINTS),
    minAmplitude: optionalNumber("minAmplitude", z.number().min(0, "minAmplitude must not be negative"), 0),
    commit: flag,
    plot: flag,
  })
  .superRefine((f, ctx) => {
    if (f.referenceM === undefined && f.reference === undefined) ctx.addIssue({ code: "custom", path: ["referenceM"], message: "give referenceM (m) or a reference JSON" });
    if (f.referenceM !== undefined && f.reference !== undefined) ctx.addIssue({ code: "custom", path: ["reference"], message: "give referenceM or reference, not both" });
  });
export type FrameFields = z.infer<typeof frameFieldsSchema>;

/** One target of the answer (api.md v1.1), plus `reason` for a target not found and, on request, `plot`. */
export type ScanTargetRow = {
  targetId: string;
  /** The target's label, for the screens. */
  label?: string;
  status: "found" | "not_found";
  reason: string | null;
  points: number;
  planeRmsMm: number | null;
  incidenceDeg: number | null;
  rangeM: number | null;
  referenceM: number | null;
  errorMm: number | null;
  limitMm: number | null;
  within: boolean | null;
  shotId: string | null;
  /** Why the shot cannot be computed (a found target whose figures the ranging core refused). */
  errors?: RecordError[];
  sync?: { status: SyncResult["status"]; errors: RecordError[] };
  temporalNoiseMm?: number | null;
  flyingPixels?: number | null;
  plot?: { a: number[]; b: number[]; dMm: number[] } | null;
};
export type ScanAnswer = { fileSha256: string; targets: ScanTargetRow[] };
