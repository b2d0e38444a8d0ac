// One-time sign-in codes in the database (hash only): expiry, at most 5 wrong tries and single
// use hold across every app instance. Only the newest code of an address counts.
import { and, asc, desc, eq, gt, isNull, lt, sql } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { loginCodes } from "~/db/schema";
import { getEnv } from "~/env.server";
import { sha256Hex } from "./tokens.server";

export const CODE_TTL_MS = 10 * 60_000;
export const MAX_CODE_TRIES = 5;
/**
 * Wrong codes one address may collect over all its codes in 24 hours. Per code there are only
 * 5 tries, but fresh codes can be asked for again and again; this caps the guesses at
 * 20 in a million a day (issue 11). Counted from login_codes, so every instance agrees.
 */
export const MAX_WRONG_CODES_PER_DAY = 20;
const DAY_MS = 86400_000;

/** Whether an address has used up its wrong codes for now, and when one drops out of the 24 h. */
export async function codeLockout(email: string, now = new Date()): Promise<{ locked: false } | { locked: true; until: Date }> {
  const rows = await getDb()
    .select({ createdAt: loginCodes.createdAt, attempts: loginCodes.attempts })
    .from(loginCodes)
    .where(and(eq(loginCodes.email, email), gt(loginCodes.createdAt, new Date(now.getTime() - DAY_MS).toISOString()), gt(loginCodes.attempts, 0)))
    .orderBy(asc(loginCodes.createdAt));
  let wrong = rows.reduce((n, r) => n + r.attempts, 0);
  if (wrong < MAX_WRONG_CODES_PER_DAY) return { locked: false };
  // The lock ends when enough of the oldest wrong tries have left the 24-hour window.
  for (const r of rows) {
    wrong -= r.attempts;
    if (wrong < MAX_WRONG_CODES_PER_DAY) return { locked: true, until: new Date(Date.parse(r.createdAt) + DAY_MS) };
  }
  return { locked: true, until: new Date(now.getTime() + DAY_MS) };
}

export function lockoutMessage(until: Date) {
  const at = until.toISOString().slice(0, 16).replace("T", " ");
  return `Too many wrong codes for this address in the last 24 hours (${MAX_WRONG_CODES_PER_DAY}). Signing in with a code is paused for it until ${at} UTC. If these tries were not yours, tell an admin.`;
}

/** Peppered with the current signing secret, so a leaked table does not give codes away. */
export async function hashCode(email: string, code: string) {
  return sha256Hex(`${getEnv().SESSION_SECRET[0]}:login-code:${email}:${code}`);
}

/**
 * Stores the newest code of an address. For an address that may not sign in, a row with an
 * unguessable hash is stored instead, so that address gets exactly the same answers later.
 */
export async function issueLoginCode(email: string, code: string | null, ip: string, now = new Date()) {
  const hash = code ? await hashCode(email, code) : await sha256Hex(`unmatchable:${crypto.randomUUID()}`);
  const [row] = await getDb()
    .insert(loginCodes)
    .values({
      email,
      codeHash: hash,
      createdAt: now.toISOString(),
      expiresAt: new Date(now.getTime() + CODE_TTL_MS).toISOString(),
      ip,
    })
    .returning({ id: loginCodes.id });
  return row!.id;
}

export type CodeCheck = { ok: true; id: string } | { ok: false; reason: "none" | "expired" | "used" | "locked" | "wrong"; triesLeft?: number };

export async function checkLoginCode(email: string, code: string, now = new Date()): Promise<CodeCheck> {
  const db = getDb();
  const [row] = await db
    .select()
    .from(loginCodes)
    .where(eq(loginCodes.email, email))
    .orderBy(desc(loginCodes.createdAt), desc(sql`rowid`))
    .limit(1);
  if (!row) return { ok: false, reason: "none" };
  if (row.usedAt) return { ok: false, reason: "used" };
  if (row.attempts >= MAX_CODE_TRIES) return { ok: false, reason: "locked" };
  if (row.expiresAt <= now.toISOString()) return { ok: false, reason: "expired" };
  if ((await hashCode(email, code)) === row.codeHash) {
    // Compare-and-set: of two racing requests with the right code, one wins.
    const used = await db
      .update(loginCodes)
      .set({ usedAt: now.toISOString() })
      .where(and(eq(loginCodes.id, row.id), isNull(loginCodes.usedAt), lt(loginCodes.attempts, MAX_CODE_TRIES)))
      .returning({ id: loginCodes.id });
    return used.length ? { ok: true, id: row.id } : { ok: false, reason: "used" };
  }
  const [bumped] = await db
    .update(loginCodes)
    .set({ attempts: sql`${loginCodes.attempts} + 1` })
    .where(and(eq(loginCodes.id, row.id), lt(loginCodes.attempts, MAX_CODE_TRIES)))
    .returning({ attempts: loginCodes.attempts });
  if (!bumped) return { ok: false, reason: "locked" };
  const triesLeft = MAX_CODE_TRIES - bumped.attempts;
  return triesLeft > 0 ? { ok: false, reason: "wrong", triesLeft } : { ok: false, reason: "locked", triesLeft: 0 };
}

export function codeCheckMessage(c: Exclude<CodeCheck, { ok: true }>) {
  switch (c.reason) {
    case "wrong":
      return `That code is not right. ${c.triesLeft} ${c.triesLeft === 1 ? "try" : "tries"} left for this code — check the newest e-mail.`;
    case "locked":
      return `Too many wrong tries: this code no longer works. Request a new code.`;
    case "expired":
      return `This code has expired (codes work for ${CODE_TTL_MS / 60_000} minutes). Request a new code.`;
    case "used":
      return `This code has already been used. Request a new code to sign in again.`;
    case "none":
      return `There is no code waiting for this address. Request a new code.`;
  }
}
