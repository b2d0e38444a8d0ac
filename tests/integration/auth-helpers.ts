// Helpers for the sign-in, token, mail and access-matrix tests: call real loaders/actions,
// read what they answer, carry cookies like a browser, read mail the fake SMTP wrote.
import { mkdirSync, readdirSync, readFileSync } from "node:fs";
import { join, resolve } from "node:path";
import { RouterContextProvider } from "react-router";
import { clientAddressContext } from "~/http/client-address.server";
import { parseEml, type ParsedMail } from "~/mail/eml.server";
import { freePort } from "../support/ports";

export { freePort };

export type Answer = { status: number; location: string | null; body: unknown; setCookies: string[]; headers: Headers };

/** What a loader or action answered, returned or thrown (Response, data(), plain value). */
export async function answerOf(fn: () => Promise<unknown>): Promise<Answer> {
  let value: unknown;
  try {
    value = await fn();
  } catch (thrown) {
    value = thrown;
    if (!(thrown instanceof Response) && !isDataWithInit(thrown)) throw thrown;
  }
  if (value instanceof Response) {
    const text = await value.text();
    let body: unknown = text;
    try {
      body = JSON.parse(text);
    } catch {}
    return { status: value.status, location: value.headers.get("Location"), body, setCookies: value.headers.getSetCookie(), headers: value.headers };
  }
  if (isDataWithInit(value)) {
    const headers = new Headers(value.init?.headers);
    return { status: value.init?.status ?? 200, location: headers.get("Location"), body: value.data, setCookies: headers.getSetCookie(), headers };
  }
  return { status: 200, location: null, body: value, setCookies: [], headers: new Headers() };
}

function isDataWithInit(v: unknown): v is { type: "DataWithResponseInit"; data: unknown; init: ResponseInit | null } {
  return typeof v === "object" && v !== null && (v as { type?: unknown }).type === "DataWithResponseInit";
}

/** A tiny cookie jar: Set-Cookie in, Cookie header out (expired or empty cookies dropped). */
export class Jar {
  private map = new Map<string, string>();
  take(setCookies: string[]) {
    for (const sc of setCookies) {
      const [pair, ...attrs] = sc.split(";");
      const i = pair!.indexOf("=");
      const name = pair!.slice(0, i).trim();
      const value = pair!.slice(i + 1).trim();
      const expired = attrs.some((a) => /^\s*max-age=0\s*$/i.test(a) || (/^\s*expires=/i.test(a) && Date.parse(a.split("=")[1]!) < Date.now()));
      if (expired || value === "") this.map.delete(name);
      else this.map.set(name, value);
    }
    return this;
  }
  has(name: string) {
    return this.map.has(name);
  }
  header() {
    return [...this.map].map(([k, v]) => `${k}=${v}`).join("; ");
  }
  clone() {
    const j = new Jar();
    for (const [k, v] of this.map) j.map.set(k, v);
    return j;
  }
}

/** The socket address a request "came from": what app/cli/serve.ts puts in the context. */
const socketOf = new WeakMap<Request, string>();

/** `ip` is the client's socket address (not a header: X-Forwarded-For is the client's to forge). */
export function formRequest(path: string, fields: Record<string, string>, opts: { cookie?: string; ip?: string; forwardedFor?: string } = {}) {
  const headers = new Headers({ "Content-Type": "application/x-www-form-urlencoded" });
  if (opts.cookie) headers.set("Cookie", opts.cookie);
  if (opts.forwardedFor) headers.set("X-Forwarded-For", opts.forwardedFor);
  const r = new Request(`http://localhost${path}`, { method: "POST", body: new URLSearchParams(fields), headers });
  if (opts.ip) socketOf.set(r, opts.ip);
  return r;
}

export function getRequest(path: string, opts: { cookie?: string; bearer?: string; ip?: string; forwardedFor?: string } = {}) {
  const headers = new Headers();
  if (opts.cookie) headers.set("Cookie", opts.cookie);
  if (opts.bearer) headers.set("Authorization", `Bearer ${opts.bearer}`);
  if (opts.forwardedFor) headers.set("X-Forwarded-For", opts.forwardedFor);
  const r = new Request(`http://localhost${path}`, { headers });
  if (opts.ip) socketOf.set(r, opts.ip);
  return r;
}

export function args(request: Request, params: Record<string, string> = {}) {
  const context = new RouterContextProvider();
  const ip = socketOf.get(request);
  if (ip) context.set(clientAddressContext, ip);
  return { request, params, context, unstable_pattern: "" } as never;
}

export function tempMailDir(tag: string) {
  const dir = resolve(process.cwd(), `tests/.tmp/mail-${tag}-${process.pid}-${Math.random().toString(36).slice(2, 8)}`);
  mkdirSync(dir, { recursive: true });
  return dir;
}

/** Every message the fake wrote to this address, oldest first. */
export function mailsTo(dir: string, address: string): ParsedMail[] {
  return readdirSync(dir)
    .filter((n) => n.endsWith(".eml"))
    .sort()
    .map((n) => parseEml(readFileSync(join(dir, n), "utf8"), n))
    .filter((m) => m.to.toLowerCase().includes(address.toLowerCase()));
}

export function errorText(body: unknown): string {
  const r = (body as { result?: { error?: Record<string, string[] | null> } })?.result;
  if (r?.error) return Object.values(r.error).flat().filter(Boolean).join(" ");
  const e = (body as { error?: unknown })?.error;
  return typeof e === "string" ? e : "";
}
