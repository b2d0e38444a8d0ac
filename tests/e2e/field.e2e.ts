// The field PWA in real Chromium: the worker installs online, the crew works offline (reload,
// session, shots, a photo, reload again), everything syncs when the network returns; a big
// outbox drains in batches with a progress bar; a failing server loses nothing; a refused
// shot shows the server's message on its field and goes out again once fixed.
// The network is cut for real: Chromium sends everything (the service worker's requests too)
// through a local proxy the tests switch off (tests/support/net-proxy.ts); context.setOffline
// would leave the worker's own network up.
import { readFileSync, writeFileSync } from "node:fs";
import { resolve } from "node:path";
import { afterAll, beforeAll, beforeEach, expect, test } from "vitest";
import type { Browser, BrowserContext, Page } from "playwright-core";
import { launchBrowser, newContext, seriousA11yViolations, signInAs } from "./helpers";
import { fieldWorld, serverShotCount, type FieldWorld } from "./field-fixtures";
import { startNetProxy, type NetProxy } from "../support/net-proxy";

let browser: Browser;
let world: FieldWorld;
let net: NetProxy;

beforeAll(async () => {
  net = await startNetProxy();
  browser = await launchBrowser({ proxy: net });
  world = await fieldWorld("E2E");
});
beforeEach(() => {
  net.setOnline(true);
});
afterAll(async () => {
  await browser?.close();
  await net?.close();
});

/** Cuts (false) or restores (true) the whole network of the browser, service worker included. */
function network(on: boolean) {
  net.setOnline(on);
}

// 1×1 PNG.
const PNG = Buffer.from("iVBORw0KGgoAAAANSUhEUgAAAAEAAAABCAYAAAAfFcSJAAAADUlEQVR42mNk+M9QDwADhgGAWjR9awAAAABJRU5ErkJggg==", "base64");

async function openFieldOnline(context: BrowserContext): Promise<Page> {
  const page = await context.newPage();
  page.on("pageerror", (e) => console.warn("pageerror:", e.message));
  page.on("requestfailed", (r) => console.warn("requestfailed:", r.url(), r.failure()?.errorText));
  page.on("console", (m) => {
    if (m.type() === "error" || m.type() === "warning") console.warn(`console.${m.type()}:`, m.text());
  });
  await page.goto("/field");
  await page.evaluate(async () => {
    await navigator.serviceWorker.ready;
  });
  // The worker keeps one copy of each field screen, and the reference data is in IndexedDB.
  await page.waitForFunction(async () => {
    const names = await caches.keys();
    const count = async (prefix: string) => {
      const name = names.find((n) => n.startsWith(prefix));
      return name ? (await (await caches.open(name)).keys()).length : 0;
    };
    return (await count("field-pages-")) >= 5 && (await count("field-data-")) >= 5;
  });
  await page.waitForFunction(() => {
    const t = document.querySelector('[data-testid="reference-copied-at"]')?.textContent ?? "";
    return t !== "" && t !== "…" && t !== "never";
  });
  return page;
}

async function outboxTotal(page: Page): Promise<number> {
  return page.evaluate(async () => (await (window.shotbookField as { outboxCounts(): Promise<{ total: number }> }).outboxCounts()).total);
}

/** Queues a session and n shots through the app's own outbox functions. */
async function queueShots(page: Page, n: number): Promise<string> {
  const t0 = Date.now();
  const id = await page.evaluate(
    async ({ n, sensorId, siteId, targets }) => {
      type F = {
        startSession(r: object): Promise<{ id: string }>;
        saveShot(d: object, p: null, ctx: object): Promise<unknown>;
        readReference(): Promise<{ sensors: { id: string }[]; sites: { id: string }[]; tapes: unknown[] }>;
      };
      const f = window.shotbookField as unknown as F;
      const s = await f.startSession({ sensorId, siteId, airTempC: 18.5, pressureHpa: 1004.2, humidityPct: 62 });
      const ref = await f.readReference();
      const ctx = { sensor: ref.sensors.find((x) => x.id === sensorId), site: ref.sites.find((x) => x.id === siteId), tapes: ref.tapes, project: undefined };
      for (let i = 0; i < n; i++) {
        const t = targets[i % targets.length]!;
        await f.saveShot(
          {
            sessionId: s.id,
            targetId: t.id,
            reference: { method: "edm", distanceM: t.referenceM },
            readings: { rangesM: [t.referenceM + ((i % 7) - 3) / 1000] },
            reflectancePct: t.reflectancePct,
            illuminanceKlux: 20,
          },
          null,
          ctx,
        );
      }
      return s.id;
    },
    { n, sensorId: world.sensor.id, siteId: world.site.id, targets: world.site.targets.map((t) => ({ id: t.id, referenceM: t.referenceM!, reflectancePct: t.reflectancePct })) },
  );
  console.info(`queued ${n} shots in ${Date.now() - t0} ms`);
  return id;
}

async function report(page: Page) {
  // api.md v1.1: the per-shot rows come only with include=shots
  const res = await page.request.get(`/api/sensors/${world.sensor.id}/report?include=shots`);
  expect(res.status()).toBe(200);
  return (await res.json()) as { n: number; shots: { id: string; sessionId: string; errorMm: number }[] };
}

test("a crew logs check-shots with no signal, reloads, and everything syncs when the network returns", async () => {
  const context = await newContext(browser, { viewport: { width: 1024, height: 1366 } });
  await context.grantPermissions(["geolocation"]);
  await context.setGeolocation({ latitude: 10.00011, longitude: -30.00002, accuracy: 4 });
  await signInAs(context, "crew@e2e.test");
  const page = await openFieldOnline(context);

  network(false);
  await page.reload();
  // The browser still believes it is online; the server's silence is what counts.
  expect(await page.evaluate(() => navigator.onLine)).toBe(true);
  expect(
    await page.evaluate(() =>
      fetch("/healthz").then(
        () => "reached",
        () => "offline",
      ),
    ),
  ).toBe("offline");
  await page.getByRole("heading", { name: "Start session" }).waitFor();
  await page.getByText("Offline — saving on this tablet").waitFor();

  await page.getByLabel("Sensor", { exact: true }).selectOption(world.sensor.id);
  await page.getByLabel("Site", { exact: true }).selectOption(world.site.id);
  await page.getByLabel("Air temperature (°C)").fill("18.5");
  // Pressure and humidity left empty: the screen says which standard values stand in.
  expect(await page.getByTestId("air-defaults").textContent()).toContain("pressure 1013.25 hPa, humidity 50 %");
  await page.getByRole("button", { name: "Start session" }).click();
  await page.waitForURL(/\/field\/session\/[0-9a-f-]{36}$/);
  const sessionId = page.url().split("/").pop()!;

  const [dark, grey, white] = world.site.targets;
  const shots = [
    { target: dark!, range: "12.503", method: "EDM", photo: false },
    { target: grey!, range: "25.002", method: "EDM", photo: true },
    { target: white!, range: "40.019", method: "EDM", photo: false },
  ];
  for (const s of shots) {
    await page.getByRole("combobox", { name: /^Target/ }).selectOption(s.target.id);
    // The target fills its reflectance and its surveyed reference distance.
    expect(await page.getByLabel("Reflectance (%)").inputValue()).toBe(String(s.target.reflectancePct));
    await page.getByLabel(s.method, { exact: true }).check();
    expect(await page.getByLabel("Reference distance (m)").inputValue()).toBe(String(s.target.referenceM));
    await page.getByLabel("Sensor range (m)").fill(s.range);
    await page.getByLabel("Illuminance (klux)").fill("12");
    if (s.photo) {
      await page.setInputFiles("#f-photo", { name: "target.png", mimeType: "image/png", buffer: PNG });
      await page.getByRole("button", { name: "Get GPS fix" }).click();
      await page.getByText("10.000110°, −30.000020° ± 4 m").or(page.getByText("10.000110°, -30.000020° ± 4 m")).waitFor();
    }
    // Instant feedback from the shared ranging core before saving.
    await page.getByTestId("error-mm").waitFor();
    await page.getByRole("button", { name: "Save shot" }).click();
    await page.getByText("Saved on this tablet").waitFor();
  }
  // 40.019 m against 40 m is 19 mm long: outside ±2·(5 mm + 10 ppm·40 m) = ±10.8 mm.
  const feedback = page.getByTestId("shot-feedback");
  expect(await feedback.getByText("Outside limit").isVisible()).toBe(true);
  expect(await page.getByTestId("limit-mm").textContent()).toBe("±10.8 mm");

  await page.reload();
  await page.getByTestId("shot-table").waitFor();
  expect(await page.getByTestId("shot-row").count()).toBe(3);
  expect(await page.locator('[data-testid="shot-row"][data-state="queued"]').count()).toBe(3);
  expect(await outboxTotal(page)).toBe(5); // 1 session, 3 shots, 1 photo

  // The coverage checklist counts what the session has: dark 12.5 m in 10–30, bright 40 m in 30–100.
  await page.getByRole("link", { name: "Coverage checklist" }).click();
  await page.getByTestId("coverage-table").waitFor();
  expect(await page.getByTestId("cell-10-30-dark").textContent()).toContain("1 of 3");
  expect(await page.getByTestId("cell-30-100-bright").textContent()).toContain("1 of 3");
  // The site's targets (12.5 m dark, 25 m grey, 40 m white) can fill only two cells: the rest are out of its reach.
  expect(await page.getByTestId("cell-0-10-dark").textContent()).toContain("no such target at this site");
  expect(await page.getByTestId("coverage-summary").textContent()).toContain("Still missing: 2 cells this site can fill and a shot in bright sun");
  expect(await page.getByTestId("next-targets").textContent()).toContain("Dark board (12.5 m, 10 %): 2 more for 10–30 m dark");
  expect(await page.getByTestId("coverage-out-of-reach").textContent()).toContain("0–10 m dark");

  await page.getByRole("link", { name: "Outbox", exact: true }).click();
  await page.getByTestId("outbox-summary").waitFor();
  expect(await page.getByTestId("outbox-summary").textContent()).toBe("Waiting: 1 session, 3 shots, 1 photo.");
  expect(await page.getByTestId("storage-use").textContent()).toMatch(/Used: [\d.]+ (B|KB|MB)/);

  network(true);
  await page.waitForFunction(() => document.querySelector('[data-testid="outbox-summary"]')?.textContent?.startsWith("Nothing waiting"), undefined, { timeout: 30_000 });
  expect(await outboxTotal(page)).toBe(0);

  const r = await report(page);
  const mine = r.shots.filter((s) => s.sessionId === sessionId);
  expect(mine.length).toBe(3);
  expect(mine.map((s) => Math.round(s.errorMm)).sort((a, b) => a - b)).toEqual([2, 3, 19]);
  const photoShot = await page.evaluate(async () => {
    const db = (window.shotbookField as { db: { photos: { toArray(): Promise<{ shotId: string; state: string }[]> } } }).db;
    return (await db.photos.toArray()).map((p) => ({ shotId: p.shotId, state: p.state }));
  });
  expect(photoShot).toHaveLength(1);
  expect(photoShot[0]!.state).toBe("synced");
  const geo = await page.request.get(`/api/shots.geojson?sensor=${world.sensor.id}`);
  const located = ((await geo.json()) as { features: { geometry: { coordinates: number[] } }[] }).features;
  expect(located.some((f) => Math.abs(f.geometry.coordinates[1]! - 10.00011) < 1e-9 && Math.abs(f.geometry.coordinates[0]! + 30.00002) < 1e-9)).toBe(true);
  const photos = await page.request.get(`/api/photos?shotId=${photoShot[0]!.shotId}`);
  expect(photos.status()).toBe(200);
  expect(((await photos.json()) as { photos: unknown[] }).photos).toHaveLength(1);
  await context.close();
});

test("2,000 queued shots survive a reload and sync in batches of at most 500 with the progress bar advancing", async () => {
  const context = await newContext(browser);
  await signInAs(context, "crew@e2e.test");
  const page = await openFieldOnline(context);
  network(false);
  const sessionId = await queueShots(page, 2000);
  await page.goto("/field/outbox");
  await page.getByTestId("outbox-summary").waitFor();
  expect(await page.getByTestId("outbox-summary").textContent()).toBe("Waiting: 1 session, 2,000 shots, 0 photos.");
  expect(await outboxTotal(page)).toBe(2001);

  const batches: number[] = [];
  page.on("request", (req) => {
    if (req.url().endsWith("/api/sync") && req.method() === "POST") batches.push((JSON.parse(req.postData() ?? "{}") as { shots: unknown[] }).shots.length);
  });
  await page.evaluate(() => {
    const w = window as unknown as { __progress: number[] };
    w.__progress = [];
    setInterval(() => {
      const el = document.querySelector<HTMLProgressElement>('[data-testid="sync-progress"]');
      if (el && el.value !== w.__progress[w.__progress.length - 1]) w.__progress.push(el.value);
    }, 5);
  });
  network(true);
  await page.waitForFunction(() => document.querySelector('[data-testid="outbox-summary"]')?.textContent?.startsWith("Nothing waiting"), undefined, { timeout: 60_000 });
  const progress = await page.evaluate(() => (window as unknown as { __progress: number[] }).__progress);
  console.info("progress values seen:", progress.join(", "), "| shots per request:", batches.join(", "));
  expect(batches.length).toBeGreaterThanOrEqual(4);
  expect(Math.max(...batches)).toBeLessThanOrEqual(500);
  expect(batches.reduce((a, b) => a + b, 0)).toBe(2000);
  // The bar moved through intermediate values, never backwards.
  const inner = progress.filter((v) => v > 0 && v < 2001);
  expect(inner.length).toBeGreaterThanOrEqual(2);
  for (let i = 1; i < progress.length; i++) expect(progress[i]!).toBeGreaterThanOrEqual(progress[i - 1]!);
  expect(await serverShotCount(sessionId)).toBe(2000);
  await context.close();
}, 240_000);

test("a server that answers 500 mid-sync loses nothing: the rest stays queued and goes out later", async () => {
  const context = await newContext(browser);
  await signInAs(context, "crew@e2e.test");
  const page = await openFieldOnline(context);
  network(false);
  const sessionId = await queueShots(page, 1200);
  let calls = 0;
  let failing = true;
  await context.route("**/api/sync", async (route) => {
    calls++;
    if (failing && calls >= 2) return route.fulfill({ status: 500, contentType: "application/json", body: '{"error":"database restarting"}' });
    return route.continue();
  });
  await page.goto("/field/outbox");
  await page.getByTestId("outbox-summary").waitFor();
  network(true);
  // First batch in, the second fails on every try; the run gives up and says so.
  await page.waitForFunction(() => document.body.textContent?.includes("The server answered 500"), undefined, { timeout: 60_000 });
  await page.waitForFunction(() => document.querySelector("button.btn")?.textContent === "Sync now", undefined, { timeout: 60_000 });
  expect(await serverShotCount(sessionId)).toBe(499); // the first batch: the session and 499 shots
  expect(await outboxTotal(page)).toBe(701);
  failing = false;
  await page.getByRole("button", { name: "Sync now" }).click();
  await page.waitForFunction(() => document.querySelector('[data-testid="outbox-summary"]')?.textContent?.startsWith("Nothing waiting"), undefined, { timeout: 60_000 });
  expect(await serverShotCount(sessionId)).toBe(1200);
  await context.close();
}, 240_000);

test("a refused shot shows the server's message on its field, and goes out again once fixed", async () => {
  const context = await newContext(browser);
  await signInAs(context, "crew@e2e.test");
  const page = await openFieldOnline(context);
  network(false);
  // A tablet whose copy is stale: the shot names a target that belongs to another site.
  const ids = await page.evaluate(
    async ({ sensorId, siteId, stale }) => {
      type F = { startSession(r: object): Promise<{ id: string }>; saveShot(d: object): Promise<{ id: string }> };
      const f = window.shotbookField as unknown as F;
      const s = await f.startSession({ sensorId, siteId });
      const shot = await f.saveShot({ sessionId: s.id, targetId: stale, reference: { method: "edm", distanceM: 25 }, readings: { rangesM: [25.003] }, reflectancePct: 50, illuminanceKlux: 30 });
      return { sessionId: s.id, shotId: shot.id };
    },
    { sensorId: world.sensor.id, siteId: world.site.id, stale: world.other.targets[0]!.id },
  );
  await page.goto("/field/outbox");
  network(true);
  const refused = page.getByTestId("rejected-shot");
  await refused.waitFor({ timeout: 30_000 });
  expect(await refused.textContent()).toContain("Target: target");
  expect(await refused.textContent()).toContain("is not a target of the session's site");
  await refused.getByRole("link", { name: "Fix and resend" }).click();
  await page.waitForURL(new RegExp(`/field/session/${ids.sessionId}/shot/${ids.shotId}$`));
  const target = page.getByRole("combobox", { name: /^Target/ });
  expect(await target.getAttribute("aria-invalid")).toBe("true");
  const errorId = (await target.getAttribute("aria-describedby"))!;
  expect(await page.locator(`#${errorId}`).textContent()).toContain("is not a target of the session's site");
  // The fields keep what was sent.
  expect(await page.getByLabel("Sensor range (m)").inputValue()).toBe("25.003");
  await target.selectOption(world.site.targets[1]!.id);
  await page.getByRole("button", { name: "Save and resend" }).click();
  // Back to the session (where a half-typed new shot would wait), not the outbox.
  await page.waitForURL(new RegExp(`/field/session/${ids.sessionId}$`));
  await page.getByRole("link", { name: "Outbox", exact: true }).click();
  await page.waitForFunction(() => document.querySelector('[data-testid="outbox-summary"]')?.textContent?.startsWith("Nothing waiting"), undefined, { timeout: 30_000 });
  expect(await serverShotCount(ids.sessionId)).toBe(1);
  await context.close();
});

test("a refused session (unknown sensor) is fixed on its own screen, keeps its id, and goes out with its shots", async () => {
  const context = await newContext(browser, { viewport: { width: 1024, height: 1366 } });
  await signInAs(context, "crew@e2e.test");
  const page = await openFieldOnline(context);
  network(false);
  // A stale tablet: the session names a sensor the server's registry does not have.
  const ghost = "sensor-gone-e2e";
  const ids = await page.evaluate(
    async ({ ghost, siteId, targets }) => {
      type F = { startSession(r: object): Promise<{ id: string }>; saveShot(d: object): Promise<{ id: string }> };
      const f = window.shotbookField as unknown as F;
      const s = await f.startSession({ sensorId: ghost, siteId, airTempC: 17.5, pressureHpa: 1009, note: "North fence" });
      const shotIds: string[] = [];
      for (const t of targets) {
        const shot = await f.saveShot({
          sessionId: s.id,
          targetId: t.id,
          reference: { method: "edm", distanceM: t.referenceM },
          readings: { rangesM: [t.referenceM + 0.002] },
          reflectancePct: t.reflectancePct,
          illuminanceKlux: 15,
        });
        shotIds.push(shot.id);
      }
      return { sessionId: s.id, shotIds };
    },
    { ghost, siteId: world.site.id, targets: world.site.targets.slice(0, 2).map((t) => ({ id: t.id, referenceM: t.referenceM!, reflectancePct: t.reflectancePct })) },
  );
  await page.goto("/field/outbox");
  network(true);
  const refused = page.getByTestId("rejected-session");
  await refused.waitFor({ timeout: 30_000 });
  const message = `sensor ${ghost} is not in the registry`;
  expect(await refused.textContent()).toContain(`Sensor: ${message}`);
  // Nothing of it reached the server: the shots wait for their session.
  expect(await serverShotCount(ids.sessionId)).toBe(0);

  await refused.getByRole("link", { name: "Fix and resend" }).click();
  await page.waitForURL(new RegExp(`/field/session/${ids.sessionId}/fix$`));
  const sensor = page.getByRole("combobox", { name: "Sensor" });
  await sensor.waitFor();
  expect(await sensor.getAttribute("aria-invalid")).toBe("true");
  expect(await page.locator(`#${await sensor.getAttribute("aria-describedby")}`).textContent()).toBe(message);
  expect(await page.getByRole("combobox", { name: "Site" }).getAttribute("aria-invalid")).toBeNull();
  // The form shows what was sent.
  expect(await sensor.inputValue()).toBe(ghost);
  expect(await page.getByLabel("Air temperature (°C)").inputValue()).toBe("17.5");
  expect(await page.getByLabel("Pressure (hPa)").inputValue()).toBe("1009");
  expect(await page.getByLabel("Note").inputValue()).toBe("North fence");
  expect(await page.getByText("its 2 shots waiting on this tablet go out with it").isVisible()).toBe(true);
  await page.screenshot({ path: "/tmp/field-session-fix.png", fullPage: true });
  expect(await seriousA11yViolations(page)).toEqual([]);

  // An out-of-range air value is caught on its field before anything is written.
  await page.getByLabel("Humidity (%)").fill("140");
  await page.getByRole("button", { name: "Save and resend" }).click();
  await page.locator("#humidityPct-error").getByText("Humidity lies between 0 and 100 %").waitFor();
  const stored = await page.evaluate(async (id) => {
    const db = (window.shotbookField as { db: { sessions: { get(id: string): Promise<{ state: string; record: { sensorId: string; humidityPct?: number } }> } } }).db;
    return db.sessions.get(id);
  }, ids.sessionId);
  expect(stored.state).toBe("rejected");
  expect(stored.record.humidityPct).toBeUndefined();

  await page.getByLabel("Humidity (%)").fill("55");
  await sensor.selectOption(world.sensor.id);
  expect(await sensor.getAttribute("aria-invalid")).toBeNull();
  await page.getByRole("button", { name: "Save and resend" }).click();
  await page.waitForURL(/\/field\/outbox$/);
  await page.waitForFunction(() => document.querySelector('[data-testid="outbox-summary"]')?.textContent?.startsWith("Nothing waiting"), undefined, { timeout: 30_000 });

  const r = await report(page);
  const mine = r.shots.filter((s) => s.sessionId === ids.sessionId);
  expect(mine.map((s) => s.id).sort()).toEqual([...ids.shotIds].sort());
  for (const s of mine) expect(s.errorMm).toBeGreaterThan(0);
  const local = await page.evaluate(async (id) => {
    const db = (
      window.shotbookField as {
        db: {
          sessions: { get(id: string): Promise<{ id: string; state: string; record: { sensorId: string; humidityPct?: number } }> };
          shots: { where(k: string): { equals(v: string): { toArray(): Promise<{ state: string; preview: unknown }[]> } } };
        };
      }
    ).db;
    return { session: await db.sessions.get(id), shots: await db.shots.where("sessionId").equals(id).toArray() };
  }, ids.sessionId);
  expect(local.session.id).toBe(ids.sessionId);
  expect(local.session.state).toBe("synced");
  expect(local.session.record.sensorId).toBe(world.sensor.id);
  expect(local.session.record.humidityPct).toBe(55);
  // The instant check of the shots ran again against the real sensor.
  expect(local.shots.map((s) => [s.state, s.preview !== null])).toEqual([
    ["synced", true],
    ["synced", true],
  ]);
  await context.close();
});

test("an expired sign-in pauses sending with a sign-in link; after signing in, the queue goes out", async () => {
  const context = await newContext(browser);
  const user = await signInAs(context, "crew@e2e.test");
  const page = await openFieldOnline(context);
  network(false);
  const sessionId = await queueShots(page, 3);
  // The sign-in ends while the tablet is away.
  const { getDb } = await import("~/db/client.server");
  const { authSessions } = await import("~/db/schema");
  const { eq } = await import("drizzle-orm");
  await getDb().update(authSessions).set({ revokedAt: new Date().toISOString() }).where(eq(authSessions.userId, user.id));
  await page.goto("/field/outbox");
  network(true);
  const link = page.getByTestId("sign-in-to-send");
  await link.waitFor({ timeout: 30_000 });
  expect(await link.getAttribute("href")).toBe("/login?redirectTo=%2Ffield%2Foutbox");
  expect(await outboxTotal(page)).toBe(4);
  await signInAs(context, "crew@e2e.test");
  await page.goto("/field/outbox");
  await page.waitForFunction(() => document.querySelector('[data-testid="outbox-summary"]')?.textContent?.startsWith("Nothing waiting"), undefined, { timeout: 30_000 });
  expect(await serverShotCount(sessionId)).toBe(3);
  await context.close();
});

test("a new version waits while a form holds typed input, then offers to reload", async () => {
  const context = await newContext(browser);
  await signInAs(context, "crew@e2e.test");
  const page = await openFieldOnline(context);
  await page.getByLabel("Note").fill("Half typed");
  // A deploy: the server now has another worker script (the built file with one more line).
  const swFile = resolve(process.env.RR_BUILD_DIR ?? "build", "client/sw.js");
  const original = readFileSync(swFile, "utf8");
  try {
    writeFileSync(swFile, `${original}\n// next version\n`);
    await page.evaluate(async () => {
      await (await navigator.serviceWorker.getRegistration())!.update();
    });
    await page.waitForFunction(async () => Boolean((await navigator.serviceWorker.getRegistration())?.waiting), undefined, { timeout: 30_000 });
    await page.waitForTimeout(1500);
    expect(await page.evaluate(() => document.querySelectorAll('form[data-dirty="true"]').length)).toBe(1);
    expect(await page.getByTestId("update-prompt").count()).toBe(0);
    // Still waiting: nothing replaced the running version under the crew's hands.
    expect(await page.evaluate(async () => Boolean((await navigator.serviceWorker.getRegistration())?.waiting))).toBe(true);
    await page.getByLabel("Note").fill("");
    await page.getByTestId("update-prompt").waitFor({ timeout: 10_000 });
    expect(await page.getByTestId("update-prompt").textContent()).toContain("A new version is ready — reload");
    await Promise.all([page.waitForEvent("load"), page.getByRole("button", { name: "Reload" }).click()]);
    expect(await page.evaluate(async () => (await navigator.serviceWorker.getRegistration())?.waiting ?? null)).toBeNull();
    await page.getByRole("heading", { name: "Start session" }).waitFor();
  } finally {
    writeFileSync(swFile, original);
    await context.close();
  }
});

test("the field screens have no serious accessibility violations", async () => {
  const context = await newContext(browser, { viewport: { width: 1024, height: 1366 } });
  await signInAs(context, "crew@e2e.test");
  const page = await openFieldOnline(context);
  expect(await seriousA11yViolations(page)).toEqual([]);
  await page.getByLabel("Sensor", { exact: true }).selectOption(world.sensor.id);
  await page.getByLabel("Site", { exact: true }).selectOption(world.site.id);
  await page.getByRole("button", { name: "Start session" }).click();
  await page.getByRole("button", { name: "Save shot" }).click();
  await page.getByText("Enter the reflectance (%)").waitFor();
  expect(await seriousA11yViolations(page)).toEqual([]);
  await page.getByRole("link", { name: "Outbox", exact: true }).click();
  await page.getByTestId("outbox-summary").waitFor();
  expect(await seriousA11yViolations(page)).toEqual([]);
  await context.close();
});
