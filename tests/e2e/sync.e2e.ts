// End to end against the built server: a signed-in crew's browser posts a session and shots to
// /api/sync and the report shows them; a second built server is killed in the middle of a
// large sync, and the batch sent again lands every record exactly once. Expected figures come
// from ranging.md §4 (e = R̄ − D in mm, T = a + b·D/1000, L = k·T with the default k = 2).
import { spawn, type ChildProcess } from "node:child_process";
import { afterAll, beforeAll, expect, test } from "vitest";
import type { Browser } from "playwright-core";
import { inject } from "vitest";
import { baseURL, launchBrowser, newContext, signInAs, useServerEnv } from "./helpers";
import { freePort } from "../support/ports";

let browser: Browser;
let sensorId: string;
let siteId: string;
let targetId: string;
let token: string;

beforeAll(async () => {
  useServerEnv();
  browser = await launchBrowser();
  const fx = await import("../support/registry-fixtures");
  const { getDb } = await import("~/db/client.server");
  const { users } = await import("~/db/schema");
  const { createApiToken } = await import("~/auth/tokens.server");
  const { eq } = await import("drizzle-orm");
  const sensor = await fx.makeSensor({ label: "E2E roof scanner", toleranceMm: 5, tolerancePpm: 10 });
  const site = await fx.makeSite({ name: "E2E yard baseline", targets: [{ label: "grey board", reflectancePct: 50 }] });
  sensorId = sensor.id;
  siteId = site.id;
  const { e2eProject } = await import("./field-fixtures");
  await e2eProject("sync", [sensorId], [siteId]); // issue 14
  targetId = site.targets[0]!.id;
  const [crew] = await getDb().select({ id: users.id }).from(users).where(eq(users.email, "crew@e2e.test"));
  token = (await createApiToken(crew!.id, "e2e sync")).token;
});

afterAll(async () => {
  await browser?.close();
});

function shot(sessionId: string, i: number, distanceM: number, rangesM: number[]) {
  return {
    id: crypto.randomUUID(),
    sessionId,
    takenAt: `2026-05-09T10:${String(i % 60).padStart(2, "0")}:00+02:00`,
    targetId,
    reference: { method: "edm", distanceM },
    readings: { rangesM },
    reflectancePct: 50,
    illuminanceKlux: 60,
  };
}

test("a crew's browser syncs a session and shots; the report shows the server's figures", async () => {
  const context = await newContext(browser);
  await signInAs(context, "crew@e2e.test");
  const page = await context.newPage();
  await page.goto("/");
  const session = { id: crypto.randomUUID(), sensorId, siteId, startedAt: "2026-05-09T09:55:00+02:00", airTempC: 14, pressureHpa: 1011, humidityPct: 80 };
  const shots = [shot(session.id, 0, 20, [20.004, 20.006]), shot(session.id, 1, 60, [60.011]), { ...shot(session.id, 2, 30, [-1]) }];
  const body = { deviceId: "e2e-tablet", sessions: [session], shots };
  const answer = await page.evaluate(async (b) => {
    const res = await fetch("/api/sync", { method: "POST", headers: { "Content-Type": "application/json" }, body: JSON.stringify(b) });
    return { status: res.status, json: await res.json() };
  }, body);
  expect(answer.status).toBe(200);
  expect(answer.json.results.map((r: { status: string }) => r.status)).toEqual(["accepted", "accepted", "accepted", "rejected"]);
  expect(answer.json.results[3].errors[0].path).toBe("readings.rangesM.0");

  const report = await page.evaluate(async (id) => {
    const res = await fetch(`/api/sensors/${id}/report?include=shots`); // api.md v1.1: rows on request
    return { status: res.status, json: await res.json() };
  }, sensorId);
  expect(report.status).toBe(200);
  const R = report.json;
  expect(R.n).toBe(2);
  expect(R.verdict).toBe("insufficient"); // 2 < 20 shots
  const byId = new Map(R.shots.map((s: { id: string }) => [s.id, s]));
  // shot 1: R̄ = 20.005 m, e = 5 mm, L = 2·(5 + 10·20/1000) = 10.4 mm; shot 2: e = 11 mm, L = 11.2 mm
  const s1 = byId.get(shots[0]!.id) as { errorMm: number; limitMm: number; within: boolean };
  const s2 = byId.get(shots[1]!.id) as { errorMm: number; limitMm: number; within: boolean };
  expect(s1.errorMm).toBeCloseTo(5, 9);
  expect(s1.limitMm).toBeCloseTo(10.4, 9);
  expect(s2.errorMm).toBeCloseTo(11, 9);
  expect(s2.limitMm).toBeCloseTo(11.2, 9);
  expect(R.biasMm).toBeCloseTo(8, 9);

  // a viewer may read the report but not sync
  const viewerContext = await newContext(browser);
  await signInAs(viewerContext, "viewer@e2e.test");
  const vp = await viewerContext.newPage();
  await vp.goto("/");
  const refused = await vp.evaluate(async (b) => (await fetch("/api/sync", { method: "POST", headers: { "Content-Type": "application/json" }, body: JSON.stringify(b) })).status, body);
  expect(refused).toBe(403);
  await viewerContext.close();
  await context.close();
});

async function startSecondServer(): Promise<{ url: string; proc: ChildProcess }> {
  const port = await freePort();
  const buildDir = process.env.RR_BUILD_DIR ?? "build";
  const proc = spawn(process.execPath, ["--import", "tsx", "app/cli/serve.ts", `${buildDir}/server/index.js`], {
    env: {
      ...process.env,
      NODE_ENV: "production",
      HOST: "127.0.0.1",
      PORT: String(port),
      DATABASE_URL: inject("databaseUrl"),
      DATA_DIR: inject("dataDir"),
      MAIL_DIR: inject("mailDir"),
      SESSION_SECRET: inject("sessionSecret"),
      COOKIE_SECURE: "false",
    },
    stdio: ["ignore", "ignore", "ignore"],
  });
  const url = `http://127.0.0.1:${port}`;
  const deadline = Date.now() + 30_000;
  for (;;) {
    try {
      if ((await fetch(`${url}/healthz`)).ok) return { url, proc };
    } catch {}
    if (Date.now() > deadline) throw new Error("the second server did not start");
    await new Promise((r) => setTimeout(r, 200));
  }
}

async function storedCount(ids: string[]) {
  const { getDb } = await import("~/db/client.server");
  const { shots } = await import("~/db/schema");
  const { inArray, count } = await import("drizzle-orm");
  const [row] = await getDb().select({ n: count() }).from(shots).where(inArray(shots.id, ids));
  return row!.n;
}

test("a server killed in the middle of a large sync loses nothing and doubles nothing when the batch is sent again", async () => {
  const session = { id: crypto.randomUUID(), sensorId, siteId, startedAt: "2026-05-10T08:00:00+02:00" };
  const list = Array.from({ length: 500 }, (_, i) => shot(session.id, i, 5 + i * 0.2, [5 + i * 0.2 + 0.001]));
  const text = JSON.stringify({ deviceId: "e2e-tablet-2", sessions: [session], shots: list });
  const headers = { Authorization: `Bearer ${token}`, "Content-Type": "application/json" };

  // 1. killed while the body is still arriving: half is sent, then the process dies
  const a = await startSecondServer();
  const half = new TextEncoder().encode(text.slice(0, text.length >> 1));
  let pushRest!: () => void;
  const stream = new ReadableStream<Uint8Array>({
    start(c) {
      c.enqueue(half);
      pushRest = () => c.close();
    },
  });
  const cut = fetch(`${a.url}/api/sync`, { method: "POST", headers, body: stream, duplex: "half" } as RequestInit).then(
    (r) => r.status,
    () => "connection lost",
  );
  await new Promise((r) => setTimeout(r, 300));
  a.proc.kill("SIGKILL");
  pushRest();
  expect(await cut).toBe("connection lost");
  expect(await storedCount(list.map((s) => s.id))).toBe(0);

  // 2. killed just after the whole body went out: the write may or may not have committed
  const b = await startSecondServer();
  const sent = fetch(`${b.url}/api/sync`, { method: "POST", headers, body: text }).then(
    (r) => r.status,
    () => "connection lost",
  );
  await new Promise((r) => setTimeout(r, 5));
  b.proc.kill("SIGKILL");
  await sent;
  const afterKill = await storedCount(list.map((s) => s.id));
  expect([0, 500]).toContain(afterKill); // one transaction: all or nothing, never half

  // 3. the outbox sends the same batch again, to the server that is up, and once more
  const again = await fetch(`${baseURL()}/api/sync`, { method: "POST", headers, body: text });
  expect(again.status).toBe(200);
  const results = ((await again.json()) as { results: { status: string }[] }).results;
  expect(results).toHaveLength(501);
  expect(results.every((r) => r.status === (afterKill === 0 ? "accepted" : "duplicate"))).toBe(true);
  const third = (await (await fetch(`${baseURL()}/api/sync`, { method: "POST", headers, body: text })).json()) as { results: { status: string }[] };
  expect(third.results.every((r) => r.status === "duplicate")).toBe(true);
  expect(await storedCount(list.map((s) => s.id))).toBe(500);
});
