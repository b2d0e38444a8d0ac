// issue 15 (ranging.md §7): a mail to the admins 30 days before a calibration certificate of a
// sensor, tape or reference EDM falls due — once per certificate (kind, id, number, due): the
// certificate_notices row is claimed first, so several app instances never send it twice, and
// the mail goes through the ordinary mail path (mail_log, retries). Run at server start, every
// few hours after, and on demand with `npm run certificates`.
import { and, isNotNull, isNull } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { certificateNotices, edms, sensors, tapes } from "~/db/schema";
import { daysUntil } from "~/domain";
import { getEnv } from "~/env.server";
import { sendTemplateMail } from "~/mail/mailer.server";
import { listUserEmailsByRole } from "~/models/users.server";

export const NOTICE_DAYS = 30;
const CHECK_INTERVAL_MS = 6 * 3600_000;

export type DueCertificate = { kind: "sensor" | "tape" | "edm"; id: string; label: string; number: string; laboratory: string | null; due: string; days: number };

/** Live instruments whose certificate falls due within NOTICE_DAYS of `today` (or is already past). */
export async function certificatesFallingDue(today = new Date().toISOString().slice(0, 10)): Promise<DueCertificate[]> {
  const db = getDb();
  const cols = <T extends typeof sensors | typeof tapes | typeof edms>(t: T) => ({ id: t.id, label: t.label, number: t.certNumber, laboratory: t.certLaboratory, due: t.certDue });
  const live = <T extends typeof sensors | typeof tapes | typeof edms>(t: T) => and(isNull(t.retiredAt), isNotNull(t.certDue), isNotNull(t.certNumber));
  const [s, t, e] = await db.batch([
    db.select(cols(sensors)).from(sensors).where(live(sensors)),
    db.select(cols(tapes)).from(tapes).where(live(tapes)),
    db.select(cols(edms)).from(edms).where(live(edms)),
  ]);
  const out: DueCertificate[] = [];
  for (const [kind, rows] of [
    ["sensor", s],
    ["tape", t],
    ["edm", e],
  ] as const) {
    for (const r of rows) {
      const days = daysUntil(r.due!, today);
      if (days <= NOTICE_DAYS) out.push({ kind, id: r.id, label: r.label, number: r.number!, laboratory: r.laboratory, due: r.due!, days });
    }
  }
  return out.sort((a, b) => (a.due < b.due ? -1 : a.due > b.due ? 1 : a.id < b.id ? -1 : 1));
}

/** Sends each due certificate's notice once; returns the ones sent now. */
export async function notifyCertificatesDue(opts: { today?: string } = {}): Promise<{ sent: DueCertificate[] }> {
  const due = await certificatesFallingDue(opts.today);
  if (!due.length) return { sent: [] };
  const admins = await listUserEmailsByRole(["admin"]);
  const sent: DueCertificate[] = [];
  for (const c of due) {
    const claimed = await getDb().insert(certificateNotices).values({ kind: c.kind, entityId: c.id, number: c.number, due: c.due }).onConflictDoNothing().returning({ kind: certificateNotices.kind });
    if (!claimed.length) continue; // already announced
    await sendTemplateMail("certificate-due", admins, {
      kind: c.kind,
      label: c.label,
      number: c.number,
      laboratory: c.laboratory ?? "",
      due: c.due,
      days: c.days,
      registryUrl: c.kind === "sensor" ? `/admin/sensors/${c.id}` : c.kind === "tape" ? `/admin/tapes/${c.id}` : `/admin/edms/${c.id}`,
    });
    sent.push(c);
  }
  return { sent };
}

type TimerHolder = typeof globalThis & { __shotbookCertificateTimer?: ReturnType<typeof setInterval> };

/** A check at server start and every few hours (never in tests). */
export function ensureCertificateTimer() {
  const holder = globalThis as TimerHolder;
  if (holder.__shotbookCertificateTimer || getEnv().NODE_ENV === "test") return;
  const run = () => void notifyCertificatesDue().catch((e) => console.warn(`certificate check: ${e instanceof Error ? e.message : String(e)}`));
  const timer = setInterval(run, CHECK_INTERVAL_MS);
  timer.unref?.();
  holder.__shotbookCertificateTimer = timer;
  setTimeout(run, 5_000).unref?.();
}
