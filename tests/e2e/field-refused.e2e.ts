// Refused records on the tablet in real Chromium: a refused shot shows the server's message on its
// field and goes out again once fixed; a refused session is fixed on its own screen, keeps its id
// and goes out with its shots.
import { expect, test } from "vitest";
import { newContext, seriousA11yViolations, signInAs } from "./helpers";
import { serverShotCount } from "./field-fixtures";
import { drained } from "./field-tablet-helpers";
import { fieldSuite, openFieldOnline, sensorReport } from "../support/field-online";

const suite = fieldSuite("Refused");

test("a refused shot shows the server's message on its field, and goes out again once fixed", async () => {
  const context = await newContext(suite.browser);
  await signInAs(context, "crew@e2e.test");
  const page = await openFieldOnline(context);
  suite.net.setOnline(false);
  // A tablet whose copy is stale: the shot names a target that belongs to another site.
  const ids = await page.evaluate(
    async ({ sensorId, siteId, stale }) => {
      type F = { startSession(r: object): Promise<{ id: string }>; saveShot(d: object): Promise<{ id: string }> };
      const f = window.shotbookField as unknown as F;
      const s = await f.startSession({ sensorId, siteId });
      const shot = await f.saveShot({ sessionId: s.id, targetId: stale, reference: { method: "edm", distanceM: 25 }, readings: { rangesM: [25.003] }, reflectancePct: 50, illuminanceKlux: 30 });
      return { sessionId: s.id, shotId: shot.id };
    },
    { sensorId: suite.world.sensor.id, siteId: suite.world.site.id, stale: suite.world.other.targets[0]!.id },
  );
  await page.goto("/field/outbox");
  suite.net.setOnline(true);
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
  await target.selectOption(suite.world.site.targets[1]!.id);
  await page.getByRole("button", { name: "Save and resend" }).click();
  // Back to the session (where a half-typed new shot would wait), not the outbox.
  await page.waitForURL(new RegExp(`/field/session/${ids.sessionId}$`));
  await page.getByRole("link", { name: "Outbox", exact: true }).click();
  await drained(page, 30_000);
  expect(await serverShotCount(ids.sessionId)).toBe(1);
  await context.close();
});

test("a refused session (unknown sensor) is fixed on its own screen, keeps its id, and goes out with its shots", async () => {
  const context = await newContext(suite.browser, { viewport: { width: 1024, height: 1366 } });
  await signInAs(context, "crew@e2e.test");
  const page = await openFieldOnline(context);
  suite.net.setOnline(false);
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
    { ghost, siteId: suite.world.site.id, targets: suite.world.site.targets.slice(0, 2).map((t) => ({ id: t.id, referenceM: t.referenceM!, reflectancePct: t.reflectancePct })) },
  );
  await page.goto("/field/outbox");
  suite.net.setOnline(true);
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
  await sensor.selectOption(suite.world.sensor.id);
  expect(await sensor.getAttribute("aria-invalid")).toBeNull();
  await page.getByRole("button", { name: "Save and resend" }).click();
  await page.waitForURL(/\/field\/outbox$/);
  await drained(page, 30_000);

  const r = await sensorReport(page, suite.world);
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
  expect(local.session.record.sensorId).toBe(suite.world.sensor.id);
  expect(local.session.record.humidityPct).toBe(55);
  // The instant check of the shots ran again against the real sensor.
  expect(local.shots.map((s) => [s.state, s.preview !== null])).toEqual([
    ["synced", true],
    ["synced", true],
  ]);
  await context.close();
});
