// The sign-off form: one schema for the browser (Conform) and the server action.
import { z } from "zod";

const isoDate = z
  .string()
  .regex(/^\d{4}-\d{2}-\d{2}$/, "Use a date like 2026-05-04.")
  .optional();

export const signOffSchema = z
  .object({
    intent: z.literal("sign-off"),
    decision: z.enum(["approved", "rejected"], { message: "Choose approve or reject." }),
    projectId: z.string().trim().optional(),
    from: isoDate,
    to: isoDate,
    note: z.string().trim().max(2000, "Keep the note under 2000 characters.").optional(),
  })
  .superRefine((v, ctx) => {
    if (v.decision === "rejected" && !v.note) {
      ctx.addIssue({ code: "custom", path: ["note"], message: "Say why the sensor is pulled from the job." });
    }
    if (v.from && v.to && v.from > v.to) {
      ctx.addIssue({ code: "custom", path: ["to"], message: "The period ends before it starts." });
    }
  });

export type SignOffInput = z.infer<typeof signOffSchema>;

/** A reason for an exclusion: the same rule in the browser and in the JSON route. */
export const exclusionReasonSchema = z.string().trim().min(3, "Write why this shot is left out (at least 3 characters).").max(500);
