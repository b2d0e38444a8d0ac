// Issue 11: a record the server fails on must not block the others. The server is patched (a
// Playwright route on /api/sync) to answer 500 for any batch holding one given shot; the tablet
// splits its batches until that shot stands alone, sends everything else, and shows the shot in
// the outbox — named by sensor, site and time — with the server's message, still queued.
import { join } from "node:path";
import { afterAll, beforeAll, expect, test } from "vitest";
import type { Browser, BrowserContext, Page } from "playwright-core";
import { launchBrowser, newContext, signInAs } from "./helpers";
import { fieldWorld, serverShotCount, type FieldWorld } from "./field-fixtures";

const SHOTS = process.env.REVIEW_SCREENSHOTS;
let browser: Browser;
let world: FieldWorld;

beforeAll(async () => {
  browser = await launchBrowser();
  world = await fieldWorld("Stuck");
});

afterAll(async () => {
  await browser?.close();
});

async function openFieldOnline(context: BrowserContext): Promise<Page> {
  const page = await context.newPage();
  page.on("pageerror", (e) => console.warn("pageerror:", e.message));
  await page.goto("/field");
  await page.evaluate(async () => {
    await navigator.serviceWorker.ready;
  });
  await page.waitForFunction(() => {
    const t = document.querySelector('[data-testid="reference-copied-at"]')?.textContent ?? "";
    return t !== "" && t !== "…" && t !== "never";
  });
  return page;
}

/** A session and n shots queued through the app's own outbox; returns their ids. */
async function queueShots(page: Page, n: number): Promise<{ sessionId: string; shotIds: string[] }> {
  return page.evaluate(
    async ({ n, sensorId, siteId, targets }) => {
      type F = {
        startSession(r: object): Promise<{ id: string }>;
        saveShot(d: object, p: null, ctx: object): Promise<{ id: string }>;
        readReference(): Promise<{ sensors: { id: string }[]; sites: { id: string }[]; tapes: unknown[] }>;
      };
      const f = window.shotbookField as unknown as F;
      const s = await f.startSession({ sensorId, siteId, airTempC: 16, pressureHpa: 1008, humidityPct: 70 });
      const ref = await f.readReference();
      const ctx = { sensor: ref.sensors.find((x) => x.id === sensorId), site: ref.sites.find((x) => x.id === siteId), tapes: ref.tapes, project: undefined };
      const shotIds: string[] = [];
      for (let i = 0; i < n; i++) {
        const t = targets[i % targets.length]!;
        const row = await f.saveShot(
          {
            sessionId: s.id,
            targetId: t.id,
            reference: { method: "edm", distanceM: t.referenceM },
            readings: { rangesM: [t.referenceM + ((i % 5) - 2) / 1000] },
            reflectancePct: t.reflectancePct,
            illuminanceKlux: 30,
          },
          null,
          ctx,
        );
        shotIds.push(row.id);
      }
      return { sessionId: s.id, shotIds };
    },
    { n, sensorId: world.sensor.id, siteId: world.site.id, targets: world.site.targets.map((t) => ({ id: t.id, referenceM: t.referenceM!, reflectancePct: t.reflectancePct })) },
  );
}

test("a shot the server fails on is set aside with the server's message; every other record syncs", async () => {
  const context = await newContext(browser, { viewport: { width: 1024, height: 1366 } });
  await signInAs(context, "crew@e2e.test");
  const page = await openFieldOnline(context);
  await context.setOffline(true);
  const { sessionId, shotIds } = await queueShots(page, 12);
  const culprit = shotIds[4]!;
  const sent: number[] = [];
  let poisoned = true;
  // The patched server: any batch holding the culprit fails as a server bug would.
  await context.route("**/api/sync", async (route) => {
    const body = JSON.parse(route.request().postData() ?? "{}") as { shots?: { id: string }[]; sessions?: unknown[] };
    sent.push((body.shots?.length ?? 0) + (body.sessions?.length ?? 0));
    if (poisoned && body.shots?.some((s) => s.id === culprit)) {
      return route.fulfill({ status: 500, contentType: "application/json", body: '{"error":"Unexpected failure while computing shot readings"}' });
    }
    return route.continue();
  });
  await page.goto("/field/outbox");
  await page.getByTestId("outbox-summary").waitFor();
  expect(await page.getByTestId("outbox-summary").textContent()).toBe("Waiting: 1 session, 12 shots, 0 photos.");
  await context.setOffline(false);

  await page.getByTestId("stuck-shot").waitFor({ timeout: 60_000 });
  await page.waitForFunction(
    () => document.querySelector('[data-testid="outbox-summary"]')?.textContent === "Waiting: 0 sessions, 0 shots, 0 photos. Set aside, the server fails on them: 1 shot.",
    undefined,
    { timeout: 60_000 },
  );
  console.info("records per request:", sent.join(", "));
  expect(await serverShotCount(sessionId)).toBe(11);
  const card = page.getByTestId("stuck-shot");
  expect(await card.count()).toBe(1);
  const text = (await card.textContent()) ?? "";
  // named the way the crew knows it, not by a raw id
  expect(text).toContain(`${world.sensor.label} at ${world.site.name}`);
  expect(text).not.toContain(culprit);
  expect(await card.getByTestId("stuck-message").textContent()).toBe("Unexpected failure while computing shot readings");
  expect(text).toContain("Server error 500");
  // still queued on the tablet: nothing is lost
  const state = await page.evaluate(async (id) => {
    const open = indexedDB.open("shotbook-field");
    const db = await new Promise<IDBDatabase>((res, rej) => ((open.onsuccess = () => res(open.result)), (open.onerror = () => rej(open.error))));
    const row = await new Promise<{ state: string; stuck?: { status: number } }>((res) => {
      const r = db.transaction("shots").objectStore("shots").get(id);
      r.onsuccess = () => res(r.result);
    });
    db.close();
    return { state: row.state, status: row.stuck?.status };
  }, culprit);
  expect(state).toEqual({ state: "queued", status: 500 });
  // the refused section is for records the server refused on their merits, not this one
  expect(await page.getByTestId("rejected-shot").count()).toBe(0);
  if (SHOTS) await page.screenshot({ path: join(SHOTS, "outbox-stuck.png"), fullPage: true });

  // once the server is mended, "Try again now" sends it on its own and the outbox empties
  poisoned = false;
  const before = sent.length;
  await card.getByRole("button", { name: "Try again now" }).click();
  await page.waitForFunction(() => document.querySelector('[data-testid="outbox-summary"]')?.textContent?.startsWith("Nothing waiting"), undefined, { timeout: 60_000 });
  expect(sent.slice(before)).toEqual([1]);
  expect(await serverShotCount(sessionId)).toBe(12);
  await context.close();
}, 180_000);
