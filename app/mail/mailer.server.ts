// One nodemailer transport from SMTP_URL. Every mail lands in mail_log. A mail that cannot
// be sent never fails the action that caused it (sendTemplateMail never throws); it stays
// "failed" with its rendered message and is retried later (retryMails) with backoff.
// Sign-in is the exception: its code is a secret, so it is never stored (the log keeps a
// redacted subject and no payload) and is sent from an in-process queue after the request has
// answered (queueSignInCode, drained by the root middleware), so a known and an unknown address
// take the same time to answer (issue 11). A failed code mail is retried from memory a few
// times while the code is still valid.
import nodemailer from "nodemailer";
import type { Transporter } from "nodemailer";
import { and, asc, eq, inArray, lt } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { mailLog } from "~/db/schema";
import { getEnv } from "~/env.server";
import { renderMail, type MailTemplate, type RenderedMail } from "./templates.server";

export type { MailTemplate };
export type MailResult = { ok: boolean; error?: string };

/** Attempts a failed mail gets in all before it is left as failed for good. */
export const MAX_MAIL_ATTEMPTS = 5;
const RETRY_INTERVAL_MS = 5 * 60_000;

type Payload = RenderedMail & { to: string; lastAttemptAt: string };

let transport: { url: string; t: Transporter } | undefined;

export function getTransport(): Transporter {
  const url = getEnv().SMTP_URL;
  if (!transport || transport.url !== url) {
    transport?.t.close();
    transport = {
      url,
      // Short timeouts: a down mail server must not hold a request for minutes.
      t: nodemailer.createTransport({ url, connectionTimeout: 5000, greetingTimeout: 5000, socketTimeout: 15000 } as never),
    };
  }
  return transport.t;
}

function errorText(e: unknown) {
  return e instanceof Error ? e.message : String(e);
}

async function deliver(to: string, m: RenderedMail) {
  const info = await getTransport().sendMail({ from: getEnv().MAIL_FROM, to, subject: m.subject, text: m.text, html: m.html });
  return String(info.messageId ?? "");
}

/** What the log may keep of a subject: a sign-in code never reaches the database. */
function loggedSubject(template: MailTemplate, m: RenderedMail) {
  return template === "sign-in-code" ? SIGN_IN_SUBJECT_LOGGED : m.subject;
}
export const SIGN_IN_SUBJECT_LOGGED = "Your Shotbook sign-in code: (not stored)";

async function sendOne(template: MailTemplate, to: string, m: RenderedMail, keepPayload: boolean): Promise<MailResult> {
  const db = getDb();
  const now = new Date().toISOString();
  const payload: Payload | null = keepPayload && template !== "sign-in-code" ? { ...m, to, lastAttemptAt: now } : null;
  const [row] = await db
    .insert(mailLog)
    .values({ to, subject: loggedSubject(template, m), template, status: "pending", attempts: 1, payload })
    .returning({ id: mailLog.id });
  try {
    const messageId = await deliver(to, m);
    await db.update(mailLog).set({ status: "sent", messageId, error: null }).where(eq(mailLog.id, row!.id));
    return { ok: true };
  } catch (e) {
    const error = errorText(e);
    await db.update(mailLog).set({ status: "failed", error }).where(eq(mailLog.id, row!.id));
    return { ok: false, error };
  }
}

function recipients(to: string | string[]) {
  const list = (Array.isArray(to) ? to : [to]).map((s) => s.trim()).filter(Boolean);
  return [...new Set(list)];
}

/**
 * Sends one of the templates to each address (one message per recipient, so addresses
 * are never shown to each other). Never throws: failures are logged and retried later.
 */
export async function sendTemplateMail(
  template: "sign-in-code" | "invitation" | "sensor-failed" | "sensor-signed-off" | "certificate-due",
  to: string | string[],
  vars: Record<string, unknown>,
): Promise<{ ok: boolean; error?: string }> {
  try {
    ensureRetryTimer();
    const list = recipients(to);
    if (list.length === 0) return { ok: true };
    const m = renderMail(template, vars);
    const errors: string[] = [];
    for (const address of list) {
      const r = await sendOne(template, address, m, template !== "sign-in-code");
      if (!r.ok) errors.push(`${address}: ${r.error}`);
    }
    // The mail server answered: a good moment to send what failed earlier.
    if (errors.length === 0) await retryMails({ limit: 10 }).catch(() => undefined);
    return errors.length ? { ok: false, error: errors.join("; ") } : { ok: true };
  } catch (e) {
    return { ok: false, error: errorText(e) };
  }
}

// ---------- the sign-in code queue (in this process's memory only) ----------
type CodeJob = { to: string; mail: RenderedMail; logId?: string; attempts: number; validUntil: number };
const queue: { jobs: CodeJob[]; draining: Promise<void> | null } = { jobs: [], draining: null };
const codeQueue = () => queue;
/** Tries of one code mail in all; the waits between them (the code itself lives 10 minutes). */
export const CODE_MAIL_TRIES = 3;
const CODE_MAIL_RETRY_MS = [15_000, 60_000];

/**
 * Queues a sign-in code for sending after the response (no I/O here). The request that asks
 * for a code does the same work whether or not the address exists; the send happens in
 * drainSignInMail, which the root middleware starts once the answer is ready.
 */
export function queueSignInCode(to: string, vars: { code: string; magicLink?: string; minutes: number }) {
  codeQueue().jobs.push({ to, mail: renderMail("sign-in-code", vars), attempts: 0, validUntil: Date.now() + vars.minutes * 60_000 });
}

/** How many code mails wait to be sent (for tests and the health of the queue). */
export function queuedSignInMails() {
  return codeQueue().jobs.length;
}

/** Sends every queued code mail; resolves when the queue is empty (failed ones are rescheduled). */
export function drainSignInMail(): Promise<void> {
  const q = codeQueue();
  if (q.draining) return q.draining;
  if (q.jobs.length === 0) return Promise.resolve();
  q.draining = (async () => {
    try {
      for (let job = q.jobs.shift(); job; job = q.jobs.shift()) await sendCodeJob(job);
    } finally {
      q.draining = null;
    }
  })();
  return q.draining;
}

async function sendCodeJob(job: CodeJob) {
  const db = getDb();
  job.attempts++;
  try {
    if (!job.logId) {
      const [row] = await db
        .insert(mailLog)
        .values({ to: job.to, subject: SIGN_IN_SUBJECT_LOGGED, template: "sign-in-code", status: "pending", attempts: 1, payload: null })
        .returning({ id: mailLog.id });
      job.logId = row!.id;
    } else {
      await db.update(mailLog).set({ attempts: job.attempts, status: "pending" }).where(eq(mailLog.id, job.logId));
    }
    const messageId = await deliver(job.to, job.mail);
    await db.update(mailLog).set({ status: "sent", messageId, error: null }).where(eq(mailLog.id, job.logId));
  } catch (e) {
    const error = errorText(e);
    if (job.logId)
      await db
        .update(mailLog)
        .set({ status: "failed", error })
        .where(eq(mailLog.id, job.logId))
        .catch(() => undefined);
    const wait = CODE_MAIL_RETRY_MS[job.attempts - 1];
    if (job.attempts < CODE_MAIL_TRIES && wait !== undefined && Date.now() + wait < job.validUntil) {
      const t = setTimeout(() => {
        codeQueue().jobs.push(job);
        void drainSignInMail();
      }, wait);
      t.unref?.();
    } else {
      console.warn(`A sign-in code mail to ${job.to} could not be sent after ${job.attempts} tries: ${error}`);
    }
  }
}

/** Backoff before the next try: 1, 2, 4, 8 … minutes after the previous attempt. */
export function retryDelayMs(attempts: number) {
  return 60_000 * 2 ** Math.max(0, attempts - 1);
}

/**
 * Re-sends failed (and stale pending) mails that still have attempts left and whose backoff
 * has passed. Each row is claimed with a compare-and-set on `attempts`, so several app
 * instances sharing the database never send the same mail twice in one round.
 */
export async function retryMails(opts: { limit?: number; now?: Date } = {}) {
  const db = getDb();
  const now = opts.now ?? new Date();
  const rows = await db
    .select({ id: mailLog.id, status: mailLog.status, attempts: mailLog.attempts, payload: mailLog.payload, template: mailLog.template })
    .from(mailLog)
    .where(and(inArray(mailLog.status, ["failed", "pending"]), lt(mailLog.attempts, MAX_MAIL_ATTEMPTS)))
    .orderBy(asc(mailLog.at))
    .limit(opts.limit ?? 20);
  let sent = 0;
  let failed = 0;
  for (const row of rows) {
    const p = row.payload as Payload | null;
    if (!p || !p.to) continue;
    const last = Date.parse(p.lastAttemptAt);
    if (Number.isFinite(last) && now.getTime() - last < retryDelayMs(row.attempts)) continue;
    const claimed = await db
      .update(mailLog)
      .set({ attempts: row.attempts + 1, status: "pending", payload: { ...p, lastAttemptAt: now.toISOString() } })
      .where(and(eq(mailLog.id, row.id), eq(mailLog.attempts, row.attempts)))
      .returning({ id: mailLog.id });
    if (claimed.length === 0) continue;
    try {
      const messageId = await deliver(p.to, p);
      await db.update(mailLog).set({ status: "sent", messageId, error: null }).where(eq(mailLog.id, row.id));
      sent++;
    } catch (e) {
      await db
        .update(mailLog)
        .set({ status: "failed", error: errorText(e) })
        .where(eq(mailLog.id, row.id));
      failed++;
    }
  }
  return { sent, failed };
}

// On globalThis so a module reloaded by the dev server does not start a second timer.
const TIMER_KEY = Symbol.for("shotbook.mailRetryTimer");
type TimerHolder = { [TIMER_KEY]?: ReturnType<typeof setInterval> };

/** A background retry every 5 minutes in a running server (not in tests). */
function ensureRetryTimer() {
  const holder = globalThis as TimerHolder;
  if (holder[TIMER_KEY] || getEnv().NODE_ENV === "test") return;
  const timer = setInterval(() => void retryMails().catch(() => undefined), RETRY_INTERVAL_MS);
  timer.unref?.();
  holder[TIMER_KEY] = timer;
}

// The server bundle loads every route module at boot, so a restarted server with failed
// mails in the log retries them without waiting for the next send.
try {
  ensureRetryTimer();
} catch {
  // An invalid environment is reported by the first getEnv() caller that needs it.
}
