// The e-mails Shotbook sends, each as plain text (read first by most phones) and simple HTML.
// Variables are loose on purpose: callers in other areas pass what they have; missing
// values fall back to plain words instead of "undefined".
import { getEnv } from "~/env.server";

export const TEMPLATES = ["sign-in-code", "invitation", "sensor-failed", "sensor-signed-off", "certificate-due"] as const;
export type MailTemplate = (typeof TEMPLATES)[number];

export type RenderedMail = { subject: string; text: string; html: string };

function str(v: unknown, fallback = ""): string {
  if (v === null || v === undefined) return fallback;
  if (typeof v === "number") return Number.isFinite(v) ? String(v) : fallback;
  const s = String(v).trim();
  return s === "" ? fallback : s;
}

export function escapeHtml(s: string) {
  return s.replace(/[&<>"']/g, (c) => ({ "&": "&amp;", "<": "&lt;", ">": "&gt;", '"': "&quot;", "'": "&#39;" })[c]!);
}

/** An absolute link on this site (APP_URL), or the given absolute URL kept as is. */
function link(v: unknown, fallbackPath: string) {
  const s = str(v, fallbackPath);
  if (/^https?:\/\//.test(s)) return s;
  return new URL(s.startsWith("/") ? s : `/${s}`, getEnv().APP_URL).toString();
}

function mm(v: unknown) {
  return typeof v === "number" && Number.isFinite(v) ? `${v.toFixed(1)} mm` : "—";
}

function page(title: string, body: string) {
  return `<!doctype html><html><body style="font-family:Arial,Helvetica,sans-serif;font-size:16px;line-height:1.5;color:#111;max-width:560px;margin:0 auto;padding:16px">
<h1 style="font-size:22px;margin:0 0 12px">${escapeHtml(title)}</h1>
${body}
<p style="color:#555;font-size:13px;margin-top:24px">Sent by Shotbook. You get this because you have an account or were invited.</p>
</body></html>`;
}

function button(href: string, label: string) {
  return `<p><a href="${escapeHtml(href)}" style="display:inline-block;background:#0b57d0;color:#fff;padding:12px 20px;border-radius:6px;text-decoration:none;font-weight:bold">${escapeHtml(label)}</a></p>`;
}

export function renderMail(template: MailTemplate, vars: Record<string, unknown>): RenderedMail {
  switch (template) {
    case "sign-in-code": {
      const code = str(vars.code);
      const minutes = str(vars.minutes, "10");
      const magic = str(vars.magicLink);
      const subject = `Your Shotbook sign-in code: ${code}`;
      const text = [
        `Your sign-in code is:`,
        ``,
        `    ${code}`,
        ``,
        `Type it on the sign-in page. It works once and for ${minutes} minutes.`,
        magic ? `\nOr open this link in the same browser:\n${magic}\n` : ``,
        `If you did not ask to sign in, ignore this e-mail: nobody can sign in without the code.`,
      ].join("\n");
      const html = page(
        "Your sign-in code",
        `<p>Type this code on the sign-in page. It works once and for ${escapeHtml(minutes)} minutes.</p>
<p style="font-size:32px;font-weight:bold;letter-spacing:6px;font-family:monospace">${escapeHtml(code)}</p>
${magic ? `<p>Or open the link in the same browser:</p>${button(magic, "Sign in to Shotbook")}` : ""}
<p>If you did not ask to sign in, ignore this e-mail: nobody can sign in without the code.</p>`,
      );
      return { subject, text, html };
    }
    case "invitation": {
      const inviter = str(vars.inviterName, "An administrator");
      const role = str(vars.role, "viewer");
      const name = str(vars.name);
      const url = link(vars.loginUrl, "/login");
      const subject = `You are invited to Shotbook (${role})`;
      const text = [
        `${name ? `Hello ${name},\n\n` : ""}${inviter} has invited you to Shotbook with the ${role} role.`,
        ``,
        `To sign in, open ${url} and enter this e-mail address. We will e-mail you a one-time code; there is no password.`,
      ].join("\n");
      const html = page(
        "You are invited to Shotbook",
        `${name ? `<p>Hello ${escapeHtml(name)},</p>` : ""}<p>${escapeHtml(inviter)} has invited you to Shotbook with the <strong>${escapeHtml(role)}</strong> role.</p>
<p>Sign in with this e-mail address: we e-mail you a one-time code, there is no password.</p>
${button(url, "Open Shotbook")}`,
      );
      return { subject, text, html };
    }
    case "sensor-failed": {
      const label = str(vars.sensorLabel, str(vars.sensorId, "A sensor"));
      const url = link(vars.reportUrl, vars.sensorId ? `/review/sensors/${str(vars.sensorId)}` : "/review");
      const summary = str(vars.summary);
      const subject = `Sensor failed its range check: ${label}`;
      const statement = str(vars.statement);
      const figures = `Bias ${mm(vars.biasMm)}, RMSE ${mm(vars.rmseMm)}${typeof vars.withinPct === "number" ? `, within tolerance ${vars.withinPct.toFixed(1)} %` : ""}.`;
      const text = [`${label} did not pass its range check (verdict: FAIL).`, ...(statement ? [statement] : []), figures, summary ? `\n${summary}\n` : ``, `See why in the sensor report: ${url}`].join(
        "\n",
      );
      const html = page(
        `Sensor failed: ${label}`,
        `<p><strong>${escapeHtml(label)}</strong> did not pass its range check — verdict: <strong>✗ FAIL</strong>.</p>
${statement ? `<p><strong>${escapeHtml(statement)}</strong></p>` : ""}<p>${escapeHtml(figures)}</p>${summary ? `<p>${escapeHtml(summary)}</p>` : ""}
${button(url, "Open the sensor report")}`,
      );
      return { subject, text, html };
    }
    case "sensor-signed-off": {
      const label = str(vars.sensorLabel, str(vars.sensorId, "A sensor"));
      const decision = str(vars.decision, "approved");
      const by = str(vars.byName, "QA");
      const note = str(vars.note);
      const statement = str(vars.statement);
      const expired = str(vars.expired);
      const url = link(vars.reportUrl, vars.sensorId ? `/review/sensors/${str(vars.sensorId)}` : "/review");
      const word = decision === "rejected" ? "pulled from the job (rejected)" : "signed off (approved)";
      const subject = `Sensor ${decision === "rejected" ? "rejected" : "signed off"}: ${label}`;
      const text = [`${by} has ${word} ${label}.`, statement ? statement : ``, expired ? `Traceability: ${expired}.` : ``, note ? `Note: ${note}` : ``, ``, `Report: ${url}`].join("\n");
      const html = page(
        subject,
        `<p>${escapeHtml(by)} has ${escapeHtml(word)} <strong>${escapeHtml(label)}</strong>.</p>
${statement ? `<p><strong>${escapeHtml(statement)}</strong></p>` : ""}${expired ? `<p>Traceability: ${escapeHtml(expired)}.</p>` : ""}
${note ? `<p>Note: ${escapeHtml(note)}</p>` : ""}${button(url, "Open the report")}`,
      );
      return { subject, text, html };
    }
    case "certificate-due": {
      // issue 15: 30 days before a calibration certificate falls due (ranging.md §7)
      const kind = str(vars.kind) === "tape" ? "Tape" : str(vars.kind) === "edm" ? "Reference EDM" : "Sensor";
      const label = str(vars.label, "An instrument");
      const number = str(vars.number, "—");
      const lab = str(vars.laboratory);
      const due = str(vars.due, "soon");
      const days = typeof vars.days === "number" ? vars.days : null;
      const url = link(vars.registryUrl, "/admin");
      const when = days == null ? `on ${due}` : days < 0 ? `on ${due} (${-days} days ago)` : days === 0 ? `today (${due})` : `on ${due}, in ${days} days`;
      const subject = `Calibration certificate falls due: ${kind === "Reference EDM" ? "reference EDM" : kind.toLowerCase()} ${label}`;
      const text = [
        `${kind} ${label}: calibration certificate ${number}${lab ? ` (${lab})` : ""} falls due ${when}.`,
        `Sessions after that date are flagged as not traceable on the tablet and in the reports.`,
        ``,
        `Update the certificate in the registry: ${url}`,
      ].join("\n");
      const html = page(
        subject,
        `<p><strong>${escapeHtml(kind)} ${escapeHtml(label)}</strong>: calibration certificate ${escapeHtml(number)}${lab ? ` (${escapeHtml(lab)})` : ""} falls due ${escapeHtml(when)}.</p>
<p>Sessions after that date are flagged as not traceable on the tablet and in the reports.</p>
${button(url, "Open the registry")}`,
      );
      return { subject, text, html };
    }
  }
}
