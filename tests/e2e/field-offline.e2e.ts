// The field PWA in real Chromium with the network cut for real (tests/support/field-online.ts): the
// worker installs online, the crew works offline (reload, session, shots, a photo, reload again),
// everything syncs when the network returns.
import { expect, test } from "vitest";
import { newContext, signInAs } from "./helpers";
import { drained } from "./field-tablet-helpers";
import { fieldSuite, openFieldOnline, outboxTotal, sensorReport } from "../support/field-online";

const suite = fieldSuite("Offline");

// 1×1 PNG.
const PNG = Buffer.from("iVBORw0KGgoAAAANSUhEUgAAAAEAAAABCAYAAAAfFcSJAAAADUlEQVR42mNk+M9QDwADhgGAWjR9awAAAABJRU5ErkJggg==", "base64");

test("a crew logs check-shots with no signal, reloads, and everything syncs when the network returns", async () => {
  const context = await newContext(suite.browser, { viewport: { width: 1024, height: 1366 } });
  await context.grantPermissions(["geolocation"]);
  await context.setGeolocation({ latitude: 10.00011, longitude: -30.00002, accuracy: 4 });
  await signInAs(context, "crew@e2e.test");
  const page = await openFieldOnline(context);

  suite.net.setOnline(false);
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

  await page.getByLabel("Sensor", { exact: true }).selectOption(suite.world.sensor.id);
  await page.getByLabel("Site", { exact: true }).selectOption(suite.world.site.id);
  await page.getByLabel("Air temperature (°C)").fill("18.5");
  // Pressure and humidity left empty: the screen says which standard values stand in.
  expect(await page.getByTestId("air-defaults").textContent()).toContain("pressure 1013.25 hPa, humidity 50 %");
  await page.getByRole("button", { name: "Start session" }).click();
  await page.waitForURL(/\/field\/session\/[0-9a-f-]{36}$/);
  const sessionId = page.url().split("/").pop()!;

  const [dark, grey, white] = suite.world.site.targets;
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

  suite.net.setOnline(true);
  await drained(page, 30_000);
  expect(await outboxTotal(page)).toBe(0);

  const r = await sensorReport(page, suite.world);
  const mine = r.shots.filter((s) => s.sessionId === sessionId);
  expect(mine.length).toBe(3);
  expect(mine.map((s) => Math.round(s.errorMm)).sort((a, b) => a - b)).toEqual([2, 3, 19]);
  const photoShot = await page.evaluate(async () => {
    const db = (window.shotbookField as { db: { photos: { toArray(): Promise<{ shotId: string; state: string }[]> } } }).db;
    return (await db.photos.toArray()).map((p) => ({ shotId: p.shotId, state: p.state }));
  });
  expect(photoShot).toHaveLength(1);
  expect(photoShot[0]!.state).toBe("synced");
  const geo = await page.request.get(`/api/shots.geojson?sensor=${suite.world.sensor.id}`);
  const located = ((await geo.json()) as { features: { geometry: { coordinates: number[] } }[] }).features;
  expect(located.some((f) => Math.abs(f.geometry.coordinates[1]! - 10.00011) < 1e-9 && Math.abs(f.geometry.coordinates[0]! + 30.00002) < 1e-9)).toBe(true);
  const photos = await page.request.get(`/api/photos?shotId=${photoShot[0]!.shotId}`);
  expect(photos.status()).toBe(200);
  expect(((await photos.json()) as { photos: unknown[] }).photos).toHaveLength(1);
  await context.close();
});
