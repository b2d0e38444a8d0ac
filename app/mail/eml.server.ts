// Reads the .eml files the local mail fake writes (RFC 5322 headers, RFC 2045 MIME parts,
// RFC 2047 encoded words), enough for the messages nodemailer makes. Development only.
import { readdirSync, readFileSync, statSync } from "node:fs";
import { join } from "node:path";

export type ParsedMail = {
  file: string;
  subject: string;
  to: string;
  from: string;
  date: string | null;
  text: string;
  html: string | null;
  /** A 6-digit sign-in code when the message carries one. */
  code: string | null;
};

type Part = { headers: Map<string, string>; body: string };

function splitHeaders(raw: string): Part {
  const at = raw.search(/\r?\n\r?\n/);
  const head = at < 0 ? raw : raw.slice(0, at);
  const body = at < 0 ? "" : raw.slice(at).replace(/^\r?\n\r?\n/, "");
  const headers = new Map<string, string>();
  for (const line of head.replace(/\r?\n[ \t]+/g, " ").split(/\r?\n/)) {
    const i = line.indexOf(":");
    if (i > 0) headers.set(line.slice(0, i).trim().toLowerCase(), line.slice(i + 1).trim());
  }
  return { headers, body };
}

function decodeQuotedPrintable(s: string) {
  const soft = s.replace(/=\r?\n/g, "");
  const bytes: number[] = [];
  for (let i = 0; i < soft.length; i++) {
    const c = soft[i]!;
    if (c === "=" && /^[0-9A-Fa-f]{2}$/.test(soft.slice(i + 1, i + 3))) {
      bytes.push(parseInt(soft.slice(i + 1, i + 3), 16));
      i += 2;
    } else {
      for (const b of Buffer.from(c, "utf8")) bytes.push(b);
    }
  }
  return Buffer.from(bytes).toString("utf8");
}

/** RFC 2047 encoded words in headers, e.g. =?UTF-8?Q?Caf=C3=A9?= */
export function decodeHeader(value: string) {
  return value
    .replace(/(=\?[^?]+\?[QqBb]\?[^?]*\?=)\s+(?==\?)/g, "$1")
    .replace(/=\?([^?]+)\?([QqBb])\?([^?]*)\?=/g, (_m, _charset: string, enc: string, text: string) =>
      enc.toUpperCase() === "B" ? Buffer.from(text, "base64").toString("utf8") : decodeQuotedPrintable(text.replace(/_/g, " ")),
    );
}

function param(header: string | undefined, name: string) {
  const m = header?.match(new RegExp(`${name}="?([^";]+)"?`, "i"));
  return m?.[1] ?? null;
}

function decodeBody(part: Part) {
  const enc = (part.headers.get("content-transfer-encoding") ?? "7bit").toLowerCase();
  if (enc === "quoted-printable") return decodeQuotedPrintable(part.body);
  if (enc === "base64") return Buffer.from(part.body.replace(/\s+/g, ""), "base64").toString("utf8");
  return part.body;
}

function leaves(part: Part): Part[] {
  const type = part.headers.get("content-type") ?? "text/plain";
  if (!/^multipart\//i.test(type)) return [part];
  const boundary = param(type, "boundary");
  if (!boundary) return [];
  const chunks = part.body.split(`--${boundary}`);
  return chunks
    .slice(1)
    .filter((c) => !c.startsWith("--"))
    .flatMap((c) => leaves(splitHeaders(c.replace(/^\r?\n/, ""))));
}

export function parseEml(raw: string, file = ""): ParsedMail {
  const top = splitHeaders(raw);
  const parts = leaves(top);
  const textPart = parts.find((p) => /^text\/plain/i.test(p.headers.get("content-type") ?? "text/plain"));
  const htmlPart = parts.find((p) => /^text\/html/i.test(p.headers.get("content-type") ?? ""));
  const text = textPart ? decodeBody(textPart).replace(/\r\n/g, "\n").trimEnd() : "";
  const subject = decodeHeader(top.headers.get("subject") ?? "");
  const code = /sign-in code/i.test(subject) ? (subject.match(/\b(\d{6})\b/)?.[1] ?? text.match(/\b(\d{6})\b/)?.[1] ?? null) : null;
  const date = top.headers.get("date");
  return {
    file,
    subject,
    to: decodeHeader(top.headers.get("to") ?? ""),
    from: decodeHeader(top.headers.get("from") ?? ""),
    date: date && !Number.isNaN(Date.parse(date)) ? new Date(date).toISOString() : null,
    text,
    html: htmlPart ? decodeBody(htmlPart) : null,
    code,
  };
}

/** The newest messages first (by file time, then name, which starts with a time stamp). */
export function readMailDir(dir: string, limit = 50): ParsedMail[] {
  let names: string[];
  try {
    names = readdirSync(dir).filter((n) => n.endsWith(".eml"));
  } catch {
    return [];
  }
  return names
    .map((n) => ({ n, t: statSync(join(dir, n)).mtimeMs }))
    .sort((a, b) => b.t - a.t || b.n.localeCompare(a.n))
    .slice(0, limit)
    .map(({ n }) => parseEml(readFileSync(join(dir, n), "utf8"), n));
}
