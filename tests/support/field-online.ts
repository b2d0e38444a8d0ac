// Shared set-up of the field PWA's browser tests (tests/e2e/field-*.e2e.ts; issue 13: moved out of
// the one file they were): a Chromium whose whole network, the service worker's included, goes
// through a local proxy the test switches off (net-proxy.ts; context.setOffline would leave the
// worker's own network up), the registry rows the field needs, /field opened online until the worker
// holds its copies, and reads of the tablet's outbox and the server's report.
import { afterAll, beforeAll, beforeEach, expect } from "vitest";
import type { Browser, BrowserContext, Page } from "playwright-core";
import { launchBrowser } from "./browser";
import { startNetProxy, type NetProxy } from "./net-proxy";
import { fieldWorld, type FieldWorld } from "../e2e/field-fixtures";

export type FieldSuite = { browser: Browser; world: FieldWorld; net: NetProxy };

/**
 * Registers the file's hooks: the proxy and the browser before all tests, the network back on
 * before each, both closed after all. `tag` keeps this file's registry rows apart from other files'.
 */
export function fieldSuite(tag: string): FieldSuite {
  const suite = {} as FieldSuite;
  beforeAll(async () => {
    suite.net = await startNetProxy();
    suite.browser = await launchBrowser({ proxy: suite.net });
    suite.world = await fieldWorld(tag);
  });
  beforeEach(() => {
    suite.net.setOnline(true);
  });
  afterAll(async () => {
    await suite.browser?.close();
    await suite.net?.close();
  });
  return suite;
}

/** Opens /field online and waits until the worker keeps each field screen and the reference data is copied. */
export async function openFieldOnline(context: BrowserContext): Promise<Page> {
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

export async function outboxTotal(page: Page): Promise<number> {
  return page.evaluate(async () => (await (window.shotbookField as { outboxCounts(): Promise<{ total: number }> }).outboxCounts()).total);
}

/** Queues a session and n shots through the app's own outbox functions. */
export async function queueShots(page: Page, world: FieldWorld, n: number): Promise<string> {
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

/** The server's report of the world's sensor with its per-shot rows. */
export async function sensorReport(page: Page, world: FieldWorld) {
  // api.md v1.1: the per-shot rows come only with include=shots
  const res = await page.request.get(`/api/sensors/${world.sensor.id}/report?include=shots`);
  expect(res.status()).toBe(200);
  return (await res.json()) as { n: number; shots: { id: string; sessionId: string; errorMm: number }[] };
}
