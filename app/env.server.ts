// The environment, read once and validated at boot. Only PUBLIC_ENV reaches the browser.
import { z } from "zod";
import { parseStorageUrl } from "~/storage/url";

/** The development default: fine on a laptop, refused in production. */
export const DEV_SESSION_SECRET = "dev-only-secret-change-me";
/** Shorter secrets are refused in production: 32 characters of base64 are ~192 bits. */
export const MIN_SECRET_LENGTH = 32;
/**
 * Values that were ever printed in this repository (the built-in default, .env.example, the
 * docs and the tests): anyone can read them, so whoever knows one could mint sessions and
 * read sign-in codes out of the `_totp` cookie.
 */
export const KNOWN_EXAMPLE_SECRETS: readonly string[] = [DEV_SESSION_SECRET, "change-me-to-a-long-random-string", "e2e-secret", "field-bench-secret", "old-secret", "new-secret"];
const MAKE_ONE = "Make one with `openssl rand -base64 48` and set SESSION_SECRET to it";

/** Why a production SESSION_SECRET (rotation list) is refused, or null when it is fine. */
export function sessionSecretProblem(raw: string | undefined): string | null {
  const list = (raw ?? "")
    .split(",")
    .map((x) => x.trim())
    .filter(Boolean);
  if (list.length === 0) return `SESSION_SECRET is not set. ${MAKE_ONE} (a comma-separated list: the first signs, all verify).`;
  for (const [i, secret] of list.entries()) {
    const which = list.length > 1 ? `entry ${i + 1} of SESSION_SECRET` : "SESSION_SECRET";
    if (KNOWN_EXAMPLE_SECRETS.includes(secret) || /change[-_ ]?me/i.test(secret)) {
      return `${which} is a published example value that anyone can read. ${MAKE_ONE}.`;
    }
    if (secret.length < MIN_SECRET_LENGTH) {
      return `${which} is ${secret.length} characters long; production needs at least ${MIN_SECRET_LENGTH}. ${MAKE_ONE}.`;
    }
  }
  return null;
}

const schema = z
  .object({
    NODE_ENV: z.enum(["development", "production", "test"]).default("development"),
    DATABASE_URL: z.string().min(1).default("file:./data/shotbook.db"),
    DATABASE_AUTH_TOKEN: z.string().optional(),
    DATA_DIR: z.string().min(1).default("./data"),
    // No default here: production must bring its own (checked below), elsewhere the dev value.
    SESSION_SECRET: z.string().optional(),
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
    PHOTO_MAX_BYTES: z.coerce
      .number()
      .int()
      .positive()
      .default(8 * 1024 * 1024),
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
    /**
     * Proxies in front of the app that append to X-Forwarded-For: the client is the address that
     * many hops from the right. 0 (default): the socket's address, the header is ignored.
     */
    TRUST_PROXY: z.coerce
      .number({ error: "TRUST_PROXY is the number of proxies in front of the app (0, 1, 2 …)" })
      .int("TRUST_PROXY is a whole number of proxies (0, 1, 2 …)")
      .min(0, "TRUST_PROXY is 0 or more")
      .max(10, "TRUST_PROXY is at most 10")
      .default(0),
  })
  .superRefine((env, ctx) => {
    if (env.NODE_ENV !== "production") return;
    const problem = sessionSecretProblem(env.SESSION_SECRET);
    if (problem) ctx.addIssue({ code: "custom", path: ["SESSION_SECRET"], message: problem });
  })
  .transform((env) => ({
    ...env,
    SESSION_SECRET: splitSecrets(env.SESSION_SECRET ?? ""),
  }));

function splitSecrets(raw: string) {
  const list = raw
    .split(",")
    .map((x) => x.trim())
    .filter(Boolean);
  return list.length ? list : [DEV_SESSION_SECRET];
}

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
