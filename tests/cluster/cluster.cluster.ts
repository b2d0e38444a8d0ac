// Shotbook past one machine (issue 17): a libSQL server (sqld 0.24.32) primary and one replica,
// the S3 fake and two app instances — A on the primary, B on the replica, which forwards
// writes — started by `npm run cluster`'s program. Idempotency, reports, exclusions and photos
// must hold across the instances, with no answer in the 5xx range other than 503.
import { afterAll, beforeAll, expect, test } from "vitest";
import { createClient, type Client } from "@libsql/client";
import { existsSync } from "node:fs";
import { join } from "node:path";
import { DEMO_IDS } from "~/seed/scenario";
import { alive, startCluster, type Cluster } from "./start";

let c: Cluster;
let primary: Client;
let A: string;
let B: string;
const statuses: number[] = []; // every answer of either instance, to check there is no 5xx but 503

beforeAll(async () => {
  c = await startCluster();
  [A, B] = c.apps.map((a) => a.url) as [string, string];
  primary = createClient({ url: c.primaryUrl });
});

afterAll(async () => {
  primary?.close();
  if (!c) return;
  await c.stop();
  // no leftovers: sqld primary and replica and both apps are gone
  for (const pid of c.pids) expect(alive(pid)).toBe(false);
});

async function api(base: string, path: string, opts: { token: string; method?: string; json?: unknown; body?: BodyInit }) {
  const headers: Record<string, string> = { Authorization: `Bearer ${opts.token}` };
  if (opts.json !== undefined) headers["Content-Type"] = "application/json";
  const res = await fetch(`${base}${path}`, {
    method: opts.method ?? (opts.json !== undefined || opts.body ? "POST" : "GET"),
    headers,
    body: opts.json !== undefined ? JSON.stringify(opts.json) : opts.body,
  });
  statuses.push(res.status);
  return res;
}

/** POST /api/sync as the tablet does it: a 503 waits the Retry-After the server asked for, then sends again. */
async function syncLikeTablet(base: string, body: unknown): Promise<{ status: string; id: string }[]> {
  for (let attempt = 0; attempt < 10; attempt++) {
    const res = await api(base, "/api/sync", { token: c.tokens.crew, json: body });
    if (res.status === 503) {
      const wait = Number(res.headers.get("Retry-After"));
      expect(wait).toBeGreaterThan(0);
      await new Promise((r) => setTimeout(r, wait * 1000));
      continue;
    }
    expect(res.status).toBe(200);
    return ((await res.json()) as { results: { status: string; id: string }[] }).results;
  }
  throw new Error("the sync kept answering 503");
}

function batch(n: number, day: number) {
  const sessionId = crypto.randomUUID();
  const at = (m: number) => `2026-06-${String(day).padStart(2, "0")}T09:${String(m % 60).padStart(2, "0")}:00+02:00`;
  return {
    deviceId: `cluster-test-${day}`,
    sessions: [{ id: sessionId, sensorId: DEMO_IDS.roof, siteId: DEMO_IDS.yard, startedAt: at(0), airTempC: 16, pressureHpa: 1008, humidityPct: 70 }],
    shots: Array.from({ length: n }, (_, i) => {
      const d = 5 + (i % 40);
      return {
        id: crypto.randomUUID(),
        sessionId,
        takenAt: at(1 + i),
        reference: { method: "edm", distanceM: d },
        readings: { rangesM: [d + 0.002 + (i % 7) * 0.0005] },
        reflectancePct: [10, 50, 90][i % 3],
        illuminanceKlux: 30,
      };
    }),
  };
}

const report = async (base: string) => {
  // api.md v1.1: the per-shot rows come only with include=shots
  const res = await api(base, `/api/sensors/${DEMO_IDS.roof}/report?include=shots`, { token: c.tokens.qa });
  expect(res.status).toBe(200);
  return (await res.json()) as { n: number; shots: { id: string; excluded: boolean }[] };
};

/** B reads the replica, which follows the primary: B's answer is polled for at most 2 s. */
async function settles<T>(read: () => Promise<T>, ok: (v: T) => boolean, ms = 2000): Promise<T> {
  const end = Date.now() + ms;
  for (;;) {
    const v = await read();
    if (ok(v) || Date.now() > end) return v;
    await new Promise((r) => setTimeout(r, 100));
  }
}

test("the same batches sent through both instances at once store every record exactly once", async () => {
  const batches = Array.from({ length: 6 }, (_, i) => batch(150, 1 + i));
  // each batch to A and to B at the same moment, all batches together
  const answers = await Promise.all(batches.flatMap((b) => [syncLikeTablet(A, b), syncLikeTablet(B, b)]));
  for (let i = 0; i < batches.length; i++) {
    const b = batches[i]!;
    const [a, bb] = [answers[2 * i]!, answers[2 * i + 1]!];
    for (const rec of [...b.sessions, ...b.shots]) {
      const got = [a.find((r) => r.id === rec.id)?.status, bb.find((r) => r.id === rec.id)?.status];
      // one instance stored it, the other found it stored (a request repeated after a 503
      // may find its own earlier write: then both say duplicate); never rejected, never twice
      expect(got.every((s) => s === "accepted" || s === "duplicate")).toBe(true);
      expect(got.filter((s) => s === "accepted").length).toBeLessThanOrEqual(1);
    }
  }
  const ids = batches.flatMap((b) => b.shots.map((s) => s.id));
  const rs = await primary.execute({ sql: `SELECT count(*) AS n, count(DISTINCT id) AS d FROM shots WHERE id IN (SELECT value FROM json_each(?))`, args: [JSON.stringify(ids)] });
  expect(Number(rs.rows[0]!.n)).toBe(ids.length);
  expect(Number(rs.rows[0]!.d)).toBe(ids.length);
  const ses = await primary.execute({ sql: `SELECT count(*) AS n FROM check_sessions WHERE id IN (SELECT value FROM json_each(?))`, args: [JSON.stringify(batches.map((b) => b.sessions[0]!.id))] });
  expect(Number(ses.rows[0]!.n)).toBe(batches.length);
  expect(statuses.filter((s) => s >= 500 && s !== 503)).toEqual([]);
});

test("a report read through the replica's instance agrees with the primary's within 2 s", async () => {
  const onA = await report(A);
  const onB = await settles(
    () => report(B),
    (r) => JSON.stringify(r) === JSON.stringify(onA),
  );
  expect(onB).toEqual(onA);
  expect(onA.n).toBeGreaterThan(900); // the demo's shots and the test's
});

test("an exclusion made on one instance shows on the other's next report", async () => {
  const before = await report(A);
  const target = before.shots.find((s) => !s.excluded)!;
  // through B: the replica forwards the write to the primary, so A's very next report has it
  const ex = await api(B, `/api/shots/${target.id}/exclusion`, { token: c.tokens.qa, json: { reason: "target board knocked over by the wind" } });
  expect(ex.status).toBe(200);
  const onA = await report(A);
  expect(onA.shots.find((s) => s.id === target.id)!.excluded).toBe(true);
  expect(onA.n).toBe(before.n - 1);
  // through A: B, warm with the report cached before, shows the restore once its replica has it
  const back = await api(A, `/api/shots/${target.id}/exclusion`, { token: c.tokens.qa, method: "DELETE", json: { reason: "board was upright; the crew's note was wrong" } });
  expect(back.status).toBe(200);
  const onB = await settles(
    () => report(B),
    (r) => r.shots.find((s) => s.id === target.id)!.excluded === false,
  );
  expect(onB.shots.find((s) => s.id === target.id)!.excluded).toBe(false);
  expect(onB.n).toBe(before.n);
  expect(statuses.filter((s) => s >= 500 && s !== 503)).toEqual([]);
});

test("a photo uploaded through one instance is served by the other (one object store, two DATA_DIRs)", async () => {
  const b = batch(1, 20);
  await syncLikeTablet(A, b);
  // a 2×2 PNG written by Chromium's canvas encoder
  const png = Buffer.from("iVBORw0KGgoAAAANSUhEUgAAAAIAAAACCAYAAABytg0kAAAAEklEQVR4AWIyXlX+H4SZGKAAAAAA///5ejD3AAAABklEQVQDADzYBKuqbfebAAAAAElFTkSuQmCC", "base64");
  const form = new FormData();
  form.set("shotId", b.shots[0]!.id);
  form.set("file", new File([png], "board.png", { type: "image/png" }));
  const up = await api(B, "/api/photos", { token: c.tokens.crew, body: form });
  expect(up.status).toBe(201);
  const photo = ((await up.json()) as { photo: { id: string; url: string } }).photo;
  const got = await api(A, photo.url, { token: c.tokens.viewer });
  expect(got.status).toBe(200);
  expect(got.headers.get("Content-Type")).toBe("image/png");
  expect(got.headers.get("Content-Length")).toBe(String(png.length));
  expect(Buffer.from(await got.arrayBuffer()).equals(png)).toBe(true);
  // neither instance keeps it in its own folder
  for (const a of c.apps) expect(existsSync(join(a.dataDir, "photos", `${photo.id}.png`))).toBe(false);
});
