// Form schemas shared by the browser (Conform) and the server.
import { z } from "zod";
import type { Role } from "~/db/schema";

// The registry's rule (app/contract/registry.ts), repeated so the sign-in bundle stays small.
const CONTROL_CHARS = /[\u0000-\u001f\u007f-\u009f]/;
const noControlMessage = (what: string) => `Remove the tabs, line breaks or other control characters from ${what}.`;

// Kept here (not imported from the schema) so the browser bundle carries no database code.
export const ROLE_OPTIONS = ["admin", "qa", "crew", "viewer"] as const satisfies readonly Role[];

export const emailSchema = z.object({
  email: z
    .string({ error: "Enter your e-mail address." })
    .trim()
    .min(1, "Enter your e-mail address.")
    .max(254, "That address is too long.")
    .pipe(z.email("That does not look like an e-mail address: check it for typing errors.")),
  redirectTo: z.string().optional(),
});

export const CODE_DIGITS = 6;

export const codeSchema = z.object({
  code: z
    .string({ error: "Enter the 6-digit code from the e-mail." })
    .transform((s) => s.replace(/[\s-]/g, ""))
    .pipe(z.string().regex(/^\d{6}$/, "The code has 6 digits (0–9): check the e-mail again.")),
  redirectTo: z.string().optional(),
});

export const inviteSchema = z.object({
  email: z.string({ error: "Enter an e-mail address." }).trim().pipe(z.email("That does not look like an e-mail address.")),
  name: z
    .string()
    .trim()
    .max(120, "At most 120 characters.")
    .refine((s) => !CONTROL_CHARS.test(s), noControlMessage("the name"))
    .optional()
    .default(""),
  role: z.enum(ROLE_OPTIONS, { error: "Pick a role." }),
});

export const tokenSchema = z.object({
  userId: z.string({ error: "Pick the user the token acts as." }).min(1, "Pick the user the token acts as."),
  name: z
    .string({ error: "Give the token a name, e.g. the pipeline that uses it." })
    .trim()
    .min(1, "Give the token a name, e.g. the pipeline that uses it.")
    .max(80, "At most 80 characters.")
    .refine((s) => !CONTROL_CHARS.test(s), noControlMessage("the token's name")),
});
