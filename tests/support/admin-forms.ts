// Shared set-up of the registry's admin-screen tests (tests/integration/registry-admin-*.test.ts;
// issue 13: moved out of the one file they were): a form post as a browser without JavaScript
// sends it, a Request acting as a user, a loader or action run to its answer, and a good
// sensor's fields. Invented values in the manner of the demo scenario (brief.md).
import type { RegistryResult } from "~/contract/registry";
import { answerOf } from "../integration/auth-helpers";
import type { TestUser } from "./registry-fixtures";

export const uid = () => crypto.randomUUID();

type Created = Extract<RegistryResult, { status: 200 | 201 }>;
/** A model call that must succeed, narrowed to its success answer. */
export async function ok(p: Promise<RegistryResult>): Promise<Created> {
  const r = await p;
  if (r.status !== 201 && r.status !== 200) throw new Error(`expected success, got ${r.status} ${JSON.stringify(r.body)}`);
  return r;
}

export function form(fields: Record<string, string | string[]>) {
  const fd = new FormData();
  for (const [k, v] of Object.entries(fields)) for (const x of Array.isArray(v) ? v : [v]) fd.append(k, x);
  return fd;
}

export function req(path: string, user: TestUser | null, body?: FormData) {
  const headers: Record<string, string> = user ? { Authorization: `Bearer ${user.token}` } : {};
  return new Request(`http://localhost${path}`, { method: body ? "POST" : "GET", headers, body });
}

export type Fn = (args: never) => unknown;
export const run = (fn: Fn, request: Request, params: Record<string, string> = {}) => answerOf(() => fn({ request, params, context: {} } as never) as Promise<unknown>);

export type Reply = { result: { status: string; error: Record<string, string[]>; initialValue: Record<string, unknown> } };

export const goodSensor = {
  label: "Roof scanner R1",
  serial: "FH-R1-0001",
  kind: "pulsed",
  wavelengthNm: "905",
  appliesAirCorrection: "true",
  assumedRefractivity: "0",
  toleranceMm: "5",
  tolerancePpm: "10",
  outdoor: "true",
  calibrationDue: "2026-10-01",
  notes: "Van 2, left rack",
};
