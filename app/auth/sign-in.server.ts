// Sign-in by e-mail code (and magic link) with remix-auth-totp, plus the database-backed parts
// it lacks: per-address and per-IP rate limits, tries and single use of each code, invited-only
// accounts. remix-auth keeps no session: the verify callback makes our server-side session.
import { createCookie } from "react-router";
import { Authenticator } from "remix-auth";
import { TOTPStrategy } from "remix-auth-totp";
import { cookieSecure, getEnv } from "~/env.server";
import { queueSignInCode } from "~/mail/mailer.server";
import { createFirstAdmin, findUserByEmail, normalizeEmail, recordSignIn, usersTableIsEmpty } from "~/models/users.server";
import { safeRedirect } from "~/utils/http";
import { clientIp } from "~/http/client-address.server";
import { CODE_TTL_MS, checkLoginCode, codeCheckMessage, codeLockout, issueLoginCode, lockoutMessage } from "./login-codes.server";
import { hitRateLimit } from "./rate-limit.server";
import { createAuthSession } from "./session.server";
import { sha256Hex } from "./tokens.server";

export const MAGIC_LINK_PATH = "/auth/magic";
export const CODE_PAGE = "/login/code";

/** Code requests allowed per window, counted in the database for all instances together. */
export const RATE_LIMITS = {
  perAddress: { limit: 5, windowMs: 15 * 60_000 },
  perIp: { limit: 30, windowMs: 15 * 60_000 },
} as const;

export { clientIp };

/** remix-auth-totp needs 64 hex characters; derived from the current signing secret. */
async function totpSecret() {
  return sha256Hex(`totp:${getEnv().SESSION_SECRET[0]}`);
}

function totpCookieOptions() {
  // The strategy's own cookie (email and the encrypted code state) lives as long as a code.
  return {
    maxAge: CODE_TTL_MS / 1000,
    sameSite: "Lax" as const,
    httpOnly: true as const,
    path: "/",
    ...(cookieSecure() ? { secure: true as const } : {}),
  };
}

/** Where to land after a magic link (the link itself can carry no redirect). */
const nextCookie = createCookie("__shotbook_next", { httpOnly: true, sameSite: "lax", path: "/", maxAge: CODE_TTL_MS / 1000 });

/** What the strategy's cookie says: the address a code went to and its last error. */
export function readTotpState(request: Request): { email: string | null; error: string | null } {
  const cookie = request.headers.get("Cookie") ?? "";
  const raw = cookie
    .split(/;\s*/)
    .find((c) => c.startsWith("_totp="))
    ?.slice("_totp=".length);
  if (!raw) return { email: null, error: null };
  let value = raw;
  try {
    value = decodeURIComponent(raw);
  } catch {}
  const p = new URLSearchParams(value);
  return { email: p.get("email") ? normalizeEmail(p.get("email")!) : null, error: p.get("error") };
}

type Outcome = { response: Response } | { error: string; status: number };

type Run = { redirectTo: string; ip: string; sessionCookie?: string };
/** The `context` a loader or action gets: it carries the socket address (serve.ts). */
type Ctx = Parameters<typeof clientIp>[1];

function strategyFor(request: Request, run: Run, secret: string) {
  const next = run.redirectTo !== "/" ? `?redirectTo=${encodeURIComponent(run.redirectTo)}` : "";
  const ip = run.ip;
  return new TOTPStrategy<{ id: string }>(
    {
      secret,
      cookieOptions: totpCookieOptions(),
      magicLinkPath: MAGIC_LINK_PATH,
      // Digits only (inputmode="numeric" on tablets); the period is the code's life.
      totpGeneration: { charSet: "0123456789", digits: 6, period: CODE_TTL_MS / 1000, maxAttempts: 5 },
      emailSentRedirect: `${CODE_PAGE}${next}`,
      successRedirect: run.redirectTo,
      failureRedirect: `${CODE_PAGE}${next}`,
      sendTOTP: async ({ email, code, magicLink }) => {
        const address = normalizeEmail(email);
        // The same queries and the same insert for every address; the mail itself leaves after
        // the answer (queueSignInCode), so the time taken tells nobody which addresses exist.
        const [user, empty] = await Promise.all([findUserByEmail(address), usersTableIsEmpty()]);
        const mayEnter = (user?.active ?? false) || (!user && empty);
        await issueLoginCode(address, mayEnter ? code : null, ip);
        // Links point at APP_URL, not at whatever host name the request came in by.
        const link = new URL(magicLink);
        const publicLink = new URL(link.pathname + link.search, getEnv().APP_URL).toString();
        if (mayEnter) queueSignInCode(address, { code, magicLink: publicLink, minutes: CODE_TTL_MS / 60_000 });
      },
    },
    async ({ email, request: req }) => {
      const address = normalizeEmail(email);
      let user = await findUserByEmail(address);
      if (!user && (await usersTableIsEmpty())) user = await createFirstAdmin(address);
      if (!user || !user.active) throw new Error("This address may not sign in. Ask an admin for an invitation.");
      const { cookie } = await createAuthSession(user, { userAgent: req.headers.get("User-Agent"), ip });
      await recordSignIn(user.id);
      run.sessionCookie = cookie;
      return { id: user.id };
    },
  );
}

async function runStrategy(request: Request, run: Run): Promise<Response> {
  const auth = new Authenticator<{ id: string }>();
  auth.use(strategyFor(request, run, await totpSecret()), "TOTP");
  try {
    await auth.authenticate("TOTP", request);
  } catch (thrown) {
    if (thrown instanceof Response) {
      if (run.sessionCookie) {
        const headers = new Headers(thrown.headers);
        headers.append("Set-Cookie", run.sessionCookie);
        headers.append("Set-Cookie", await nextCookie.serialize("", { maxAge: 0 }));
        return new Response(null, { status: thrown.status, headers });
      }
      return thrown;
    }
    throw thrown;
  }
  throw new Error("The sign-in strategy answered without a redirect.");
}

/** The strategy reads the raw form: hand it the checked, normalised address only. */
function withForm(request: Request, fields: Record<string, string>) {
  const headers = new Headers(request.headers);
  headers.delete("Content-Length");
  headers.set("Content-Type", "application/x-www-form-urlencoded");
  return new Request(request.url, { method: "POST", headers, body: new URLSearchParams(fields) });
}

/** Step 1: a code (and magic link) by e-mail — the same answer for any address. */
export async function requestSignInCode(request: Request, input: { email: string; redirectTo?: string }, context?: Ctx): Promise<Outcome> {
  const email = normalizeEmail(input.email);
  const ip = clientIp(request, context);
  const byIp = await hitRateLimit(`code-ip:${ip}`, RATE_LIMITS.perIp.limit, RATE_LIMITS.perIp.windowMs);
  const byAddress = byIp.allowed ? await hitRateLimit(`code-email:${email}`, RATE_LIMITS.perAddress.limit, RATE_LIMITS.perAddress.windowMs) : byIp;
  if (!byIp.allowed || !byAddress.allowed) {
    const minutes = Math.ceil((byIp.allowed ? byAddress : byIp).retryAfterS / 60);
    const what = byIp.allowed ? "this address" : "this network";
    return {
      error: `Too many code requests from ${what}. Wait ${minutes} ${minutes === 1 ? "minute" : "minutes"}, then ask again — or use the newest code you already have.`,
      status: 429,
    };
  }
  const run: Run = { redirectTo: safeRedirect(input.redirectTo), ip };
  const response = await runStrategy(withForm(request, { email }), run);
  if (response.status >= 300 && response.status < 400 && response.headers.get("Location")?.startsWith(CODE_PAGE)) {
    const headers = new Headers(response.headers);
    headers.append("Set-Cookie", await nextCookie.serialize(run.redirectTo, { secure: cookieSecure() }));
    return { response: new Response(null, { status: response.status, headers }) };
  }
  return { response };
}

/** Step 2: the typed code. The database decides (tries, expiry, single use) before the strategy. */
export async function verifySignInCode(request: Request, input: { code: string; redirectTo?: string }, context?: Ctx): Promise<Outcome> {
  const { email } = readTotpState(request);
  if (!email) return { error: "This browser has no code request waiting. Enter your e-mail address again.", status: 400 };
  const lock = await codeLockout(email);
  if (lock.locked) return { error: lockoutMessage(lock.until), status: 429 };
  const check = await checkLoginCode(email, input.code);
  if (!check.ok) return { error: codeCheckMessage(check), status: check.reason === "wrong" ? 400 : 410 };
  return {
    response: await runStrategy(withForm(request, { code: input.code }), { redirectTo: safeRedirect(input.redirectTo), ip: clientIp(request, context) }),
  };
}

/** The magic link: the same checks, with the code taken from the link. */
export async function verifyMagicLink(request: Request, context?: Ctx): Promise<Outcome> {
  const url = new URL(request.url);
  const token = url.searchParams.get("t");
  const parsed = token ? await readMagicLinkToken(token) : null;
  if (!parsed) return { error: "This sign-in link is incomplete or damaged. Type the code from the e-mail instead.", status: 400 };
  const { email } = readTotpState(request);
  if (!email) {
    return {
      error: "Open the link in the same browser where you asked for the code — or type the 6-digit code there.",
      status: 400,
    };
  }
  const lock = await codeLockout(email);
  if (lock.locked) return { error: lockoutMessage(lock.until), status: 429 };
  const check = await checkLoginCode(email, parsed.code);
  if (!check.ok) return { error: codeCheckMessage(check), status: check.reason === "wrong" ? 400 : 410 };
  const next = safeRedirect(await nextCookie.parse(request.headers.get("Cookie")));
  return { response: await runStrategy(request, { redirectTo: next, ip: clientIp(request, context) }) };
}

function b64url(s: string) {
  return Uint8Array.from(atob(s.replace(/-/g, "+").replace(/_/g, "/") + "===".slice((s.length + 3) % 4)), (c) => c.charCodeAt(0));
}

/**
 * The strategy's magic-link parameter is a compact JWE (alg "dir", enc "A256GCM") of
 * { code, expires } under the TOTP secret (RFC 7516 §7.1); decrypted here to learn the code.
 */
async function readMagicLinkToken(token: string): Promise<{ code: string; expires: number } | null> {
  try {
    const [header, encKey, iv, ciphertext, tag] = token.split(".");
    if (!header || encKey !== "" || !iv || !ciphertext || !tag) return null;
    const secret = await totpSecret();
    const keyBytes = Uint8Array.from(secret.match(/../g)!, (h) => parseInt(h, 16));
    const key = await crypto.subtle.importKey("raw", keyBytes, "AES-GCM", false, ["decrypt"]);
    const ct = b64url(ciphertext);
    const t = b64url(tag);
    const data = new Uint8Array(ct.length + t.length);
    data.set(ct);
    data.set(t, ct.length);
    const plain = await crypto.subtle.decrypt({ name: "AES-GCM", iv: b64url(iv), additionalData: new TextEncoder().encode(header), tagLength: 128 }, key, data);
    const params = JSON.parse(new TextDecoder().decode(plain)) as { code?: unknown; expires?: unknown };
    if (typeof params.code !== "string" || typeof params.expires !== "number") return null;
    return { code: params.code, expires: params.expires };
  } catch {
    return null;
  }
}
