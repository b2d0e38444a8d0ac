// The environment, read once and validated at boot. Only PUBLIC_ENV reaches the browser.
import { z } from "zod";
import { parseStorageUrl } from "~/storage/url";

const schema = z.object({
  NODE_ENV: z.enum(["development", "production", "test"]).default("development"),
  DATABASE_URL: z.string().min(1).default("file:./data/shotbook.db"),
  DATABASE_AUTH_TOKEN: z.string().optional(),
  DATA_DIR: z.string().min(1).default("./data"),
  SESSION_SECRET: z
    .string()
    .min(1)
    .default("dev-only-secret-change-me")
    .transform((s) => s.split(",").map((x) => x.trim()).filter(Boolean)),
  /** Set to "false" for plain-http local runs of a production build. */
  COOKIE_SECURE: z.enum(["true", "false"]).optional(),
  CREW_SESSION_DAYS: z.coerce.number().int().positive().default(14),
  SESSION_DAYS: z.coerce.number().int().positive().default(7),
  SMTP_URL: z.string().min(1).default("smtp://127.0.0.1:2525"),
  MAIL_FROM: z.string().min(1).default("Shotbook <no-reply@shotbook.invalid>"),
  MAIL_DIR: z.string().min(1).default("./data/mail"),
  /** Development-only mail viewer at /dev/mail (on in development and the demo). */
  DEV_MAIL_VIEWER: z.enum(["true", "false"]).optional(),
  APP_URL: z.string().url().default("http://localhost:3000"),
  BASEMAP_STYLE_URL: z.string().url().optional(),
  PHOTO_MAX_BYTES: z.coerce.number().int().positive().default(8 * 1024 * 1024),
  // issue 17: files every instance sees. Unset = the folder under DATA_DIR.
  STORAGE_URL: z
    .string()
    .optional()
    .transform((v) => v || undefined)
    .superRefine((v, ctx) => {
      if (!v) return;
      try {
        parseStorageUrl(v);
      } catch (e) {
        ctx.addIssue({ code: "custom", message: (e as Error).message });
      }
    }),
  STORAGE_ACCESS_KEY_ID: z.string().optional(),
  STORAGE_SECRET_ACCESS_KEY: z.string().optional(),
});

export type Env = z.infer<typeof schema>;

let cached: Env | undefined;

export function getEnv(): Env {
  if (!cached) {
    const parsed = schema.safeParse(process.env);
    if (!parsed.success) {
      const lines = parsed.error.issues.map((i) => `  ${i.path.join(".")}: ${i.message}`);
      throw new Error(`Invalid environment:\n${lines.join("\n")}`);
    }
    cached = parsed.data;
  }
  return cached;
}

/** For tests that change process.env between cases. */
export function resetEnvCache() {
  cached = undefined;
}

export function cookieSecure(env = getEnv()) {
  if (env.COOKIE_SECURE) return env.COOKIE_SECURE === "true";
  return env.NODE_ENV === "production";
}

/** The only environment values the browser may see. */
export function publicEnv(env = getEnv()) {
  return { basemapStyleUrl: env.BASEMAP_STYLE_URL ?? null };
}
