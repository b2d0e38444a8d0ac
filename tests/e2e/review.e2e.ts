// QA review in the browser against the built server: a QA lead opens the failing sensor, sees
// which test fails with its value and limit and where (dark targets in bright sun), excludes a
// shot with a reason and watches the figures change, signs off (the e-mail lands in the mail
// fake), opens the range-error map with its legend, and imports a CSV of good and bad rows.
// With REVIEW_SCREENSHOTS=<dir>, every screen is also saved in both themes for a person to look at.
import { existsSync, mkdirSync, readdirSync, readFileSync } from "node:fs";
import { join } from "node:path";
import { afterAll, beforeAll, expect, inject, test } from "vitest";
import type { Browser, BrowserContext, Page } from "playwright-core";
import { launchBrowser, newContext, seriousA11yViolations, signInAs, useServerEnv } from "./helpers";
import type { ReviewWorld } from "../support/review-fixtures";

let browser: Browser;
let w: ReviewWorld;
const SHOTS = process.env.REVIEW_SCREENSHOTS;

beforeAll(async () => {
  useServerEnv();
  const { reviewWorld } = await import("../support/review-fixtures");
  w = await reviewWorld();
  browser = await launchBrowser();
  if (SHOTS) mkdirSync(SHOTS, { recursive: true });
});
afterAll(async () => {
  await browser?.close();
});

async function as(email: string, viewport = { width: 1280, height: 900 }): Promise<{ context: BrowserContext; page: Page }> {
  const context = await newContext(browser, { viewport });
  await signInAs(context, email);
  return { context, page: await context.newPage() };
}

async function figure(page: Page, label: string) {
  return (
    await page
      .getByTestId("figures")
      .locator("div", { has: page.getByText(label, { exact: true }) })
      .locator("dd")
      .first()
      .textContent()
  )?.trim();
}

function mailsFor(address: string) {
  const dir = inject("mailDir");
  if (!existsSync(dir)) return [];
  return readdirSync(dir)
    .filter((f) => f.endsWith(".eml") && f.includes(address.replace(/[^a-zA-Z0-9@._,-]/g, "_")))
    .map((f) => readFileSync(join(dir, f), "utf8"));
}

test("a QA lead sees which sensor fails and why, excludes a shot with a reason, and signs it off", async () => {
  const { context, page } = await as(w.users.qa.email);
  await page.goto("/review");
  const first = page.getByTestId("sensor-overview").locator("tbody tr").first();
  expect(await first.getAttribute("data-sensor")).toBe(w.failing.id);
  expect(await first.textContent()).toMatch(/Fail.*on .*bias/);
  expect(await first.getByTestId("worst").textContent()).toMatch(/worst: dark targets in bright sun \(≥ 50 klux\), \+1\d\.\d mm/);

  await first.getByRole("link", { name: "Roof scanner RS-1" }).click();
  await page.waitForURL(`**/review/sensors/${w.failing.id}`);
  const why = page.getByTestId("why");
  await why.waitFor();
  const whyText = (await why.textContent()) ?? "";
  expect(whyText).toMatch(/Bias \+\d+\.\d\d mm is beyond the limit ±5\.00 mm/);
  const bias = await page.locator('[data-test="bias"]').textContent();
  expect(bias).toMatch(/Bias\+\d+\.\d\d mm\|bias\| at most ±5\.00 mm/);
  expect(await page.locator('[data-test="bias"]').getAttribute("data-pass")).toBe("false");
  // where it fails: the worst reflectance × illuminance cell
  expect(await page.getByTestId("worst-cell").textContent()).toMatch(/dark.*targets.*high.*bright sun/i);
  // the charts drew (Plot SVGs)
  await page.locator("figure svg").first().waitFor();
  expect(await page.locator("figure svg").count()).toBeGreaterThanOrEqual(3);

  const nBefore = await figure(page, "Shots used (n)");
  const biasBefore = await figure(page, "Bias");
  expect(nBefore).toBe("30");

  await page.getByLabel("Show").selectOption("outside");
  const row = page.getByTestId("shot-table").locator("tbody tr[data-shot]").first();
  await row.getByRole("button", { name: "Exclude…" }).click();
  await page.getByRole("button", { name: "Exclude shot" }).click();
  expect(await page.locator(".field-error").first().textContent()).toMatch(/Write why/);
  await page.getByLabel(/Reason for excluding/).fill("Target board tilted by the wind; photo shows it");
  await page.getByRole("button", { name: "Exclude shot" }).click();
  await page.getByText("Shot excluded; the figures below are recomputed.").waitFor();
  await page.waitForFunction(() => {
    const dd = [...document.querySelectorAll('[data-testid="figures"] div')].find((d) => d.querySelector("dt")?.textContent === "Shots used (n)");
    return dd?.querySelector("dd")?.textContent === "29";
  });
  expect(await figure(page, "Bias")).not.toBe(biasBefore);
  await page.getByLabel("Show").selectOption("excluded");
  await page.getByText("Excluded because: Target board tilted by the wind; photo shows it").waitFor();

  expect(await seriousA11yViolations(page)).toEqual([]);

  await page.getByLabel("✗ Reject (pull from the job)").check();
  await page.getByLabel(/^Note/).fill("Dark boards in full sun read long; sensor back to the maker.");
  await page.getByRole("button", { name: "Record the sign-off" }).click();
  await page.getByTestId("signoff-done").waitFor();
  expect(await page.getByTestId("signoff-history").textContent()).toMatch(/Rejected/);

  let mail: string[] = [];
  for (let i = 0; i < 50 && mail.length === 0; i++) {
    mail = mailsFor(w.users.crew.email).filter((m) => /rejected/i.test(m));
    if (!mail.length) await new Promise((r) => setTimeout(r, 100));
  }
  expect(mail).toHaveLength(1);
  expect(mail[0]).toMatch(/Roof scanner RS-1/);
  expect(mailsFor(w.users.admin.email).some((m) => /rejected/i.test(m))).toBe(true);
  await context.close();
});

test("a viewer reads the report without exclusion or sign-off controls", async () => {
  const { context, page } = await as(w.users.viewer.email);
  await page.goto(`/review/sensors/${w.passing.id}`);
  await page.getByTestId("tests-table").waitFor();
  expect(await page.getByRole("button", { name: "Exclude…" }).count()).toBe(0);
  expect(await page.getByRole("button", { name: "Record the sign-off" }).count()).toBe(0);
  expect(await page.getByTestId("verdict-headline").textContent()).toContain("Pass");
  await context.close();
});

/**
 * A second, small site for the roof scanner 3.3 km east of the yard (0.03° of longitude at
 * 10° N): one station, one board 3 m away and six shots on the board, so the map has two sites
 * far apart, and framing this one runs into the zoom limit.
 */
async function addRoadsideShots() {
  const { makeSite } = await import("../support/registry-fixtures");
  const { ingestSync } = await import("~/models/sync.server");
  const { YARD } = await import("../support/review-fixtures");
  const at = { lat: YARD.lat, lon: YARD.lon + 0.03, h: 50 };
  const board = { lat: at.lat + 3 / 110_574, lon: at.lon, h: 50 };
  const site = await makeSite({ name: "Valley road test range", stations: [{ label: "V1", geo: at }], targets: [{ label: "Roadside board", reflectancePct: 85, geo: board }] });
  // issue 14: the world's project uses this range too, so the session implies it
  const { getDb } = await import("~/db/client.server");
  const { projectSites } = await import("~/db/schema");
  await getDb().insert(projectSites).values({ projectId: w.project.id, siteId: site.id });
  const sessionId = crypto.randomUUID();
  const answer = await ingestSync(w.users.crew, {
    deviceId: "tablet-roadside",
    sessions: [{ id: sessionId, sensorId: w.failing.id, siteId: site.id, startedAt: "2026-05-06T09:00:00+02:00", airTempC: 17, pressureHpa: 1006, humidityPct: 70 }],
    shots: Array.from({ length: 6 }, (_, i) => ({
      id: crypto.randomUUID(),
      sessionId,
      takenAt: `2026-05-06T09:0${i}:00+02:00`,
      targetId: site.targets[0]!.id,
      reference: { method: "edm", distanceM: 3 },
      readings: { rangesM: [3 + (i - 2.5) / 2000] },
      reflectancePct: 85,
      illuminanceKlux: 20,
      position: { lat: board.lat, lon: board.lon + (i - 2.5) * 0.000003, accuracyM: 3 },
    })),
  });
  const bad = ((answer.body as { results?: { status: string }[] }).results ?? []).filter((r) => r.status !== "accepted");
  if (answer.status !== 200 || bad.length) throw new Error(`roadside sync failed: ${answer.status} ${JSON.stringify(bad)}`);
  return site;
}

const zoomOf = async (page: Page) => Number(await page.getByTestId("range-map").getAttribute("data-zoom"));

test("the range-error map draws offline with its legend in mm, opens on the site with the most shots, and a click opens a shot", async () => {
  const roadside = await addRoadsideShots();
  const { context, page } = await as(w.users.qa.email);
  const external: string[] = [];
  page.on("request", (r) => {
    if (!r.url().startsWith(inject("baseURL")) && !r.url().startsWith("blob:") && !r.url().startsWith("data:")) external.push(r.url());
  });
  await page.goto(`/review/sensors/${w.failing.id}/map`);
  await page.locator('[data-map-ready="true"]').waitFor({ timeout: 30_000 });
  const legend = (await page.getByTestId("map-legend").textContent()) ?? "";
  expect(legend).toMatch(/Signed range error \(mm\)/);
  expect(legend).toMatch(/−\d+ mm.*\+\d+ mm/);
  expect(legend).toMatch(/outside its limit/);
  // 30 shots at the yard, 6 at the roadside: the map opens on the yard and frames it
  await page.getByText("30 of 36 located shots shown (Fernhollow yard baseline)").waitFor();
  await page.locator(`[data-shots="30"][data-frame="site:${w.site.id}"]`).waitFor();
  const site = page.getByLabel("Site");
  expect(await site.inputValue()).toBe(w.site.id);
  expect(await site.locator("option").allTextContents()).toEqual(["All sites", "Fernhollow yard baseline (30 shots)", "Valley road test range (6 shots)"]);
  const yardZoom = await zoomOf(page);

  await site.selectOption(roadside.id);
  await page.getByText("6 of 36 located shots shown (Valley road test range)").waitFor();
  await page.locator(`[data-shots="6"][data-frame="site:${roadside.id}"]`).waitFor();
  // a site 3 m across stops at the zoom limit, and its shots sit in the middle of the view
  expect(await zoomOf(page)).toBe(19);
  // (the middle of the view lies between the station and the board, 1.5 m south of the shots)
  const mid = (await page.getByTestId("range-map").boundingBox())!;
  for (const dy of [0, -10, -20]) {
    await page.mouse.click(mid.x + mid.width / 2, mid.y + mid.height / 2 + dy);
    if ((await page.getByTestId("shot-details").textContent())?.includes("Roadside board")) break;
  }
  expect(await page.getByTestId("shot-details").textContent()).toContain("Roadside board");
  await page.getByRole("button", { name: "Close" }).click();
  // sessions of the other site are not offered while one site is chosen
  expect(await page.getByLabel("Session").locator("option").count()).toBe(2);

  await site.selectOption("");
  await page.getByText("36 of 36 located shots shown (all sites)").waitFor();
  await page.locator('[data-shots="36"][data-frame="site:"]').waitFor();
  // two sites 3.3 km apart: the whole view is far wider than one site's
  expect(await zoomOf(page)).toBeLessThan(yardZoom - 4);

  await site.selectOption(w.site.id);
  await page.getByText("30 of 36 located shots shown (Fernhollow yard baseline)").waitFor();
  await page.locator(`[data-frame="site:${w.site.id}"]`).waitFor();
  expect(await zoomOf(page)).toBeCloseTo(yardZoom, 2);
  await page.getByLabel("Reflectance").selectOption("dark");
  await page.getByText("14 of 36 located shots shown (Fernhollow yard baseline)").waitFor();
  await page.locator('[data-shots="14"]').waitFor();
  await page.getByLabel("Session").selectOption({ index: 2 });
  await page.getByText("9 of 36 located shots shown (Fernhollow yard baseline)").waitFor();
  await page.getByLabel("Session").selectOption("");
  await page.waitForTimeout(600);
  if (SHOTS) await page.screenshot({ path: join(SHOTS, "map-light.png"), fullPage: true });
  // click the middle of the map where the shot corridor runs
  const box = (await page.getByTestId("range-map").boundingBox())!;
  let opened = false;
  for (let dy = -200; dy <= 200; dy += 15) {
    await page.mouse.click(box.x + box.width / 2, box.y + box.height / 2 + dy);
    if ((await page.getByTestId("shot-details").textContent())?.includes("Error")) {
      opened = true;
      break;
    }
  }
  expect(opened).toBe(true);
  await page.getByLabel("Hexagon bins (dense corridors)").check();
  await page.getByText("Mean range error per hexagon (mm)").waitFor();
  expect(external).toEqual([]);
  await context.close();
});

const CSV = [
  "Timestamp,Board,Ref dist [m],Range [m],Lux [klux]",
  "2026-05-07 10:00:00,Dark board,25.000,25.004,70",
  "2026-05-07 10:00:10,White board,25.000,25.001,70",
  "2026-05-07 10:00:20,Grey board,40.000,40.0015,71",
  "yesterday,White board,25.000,25.001,70",
  "2026-05-07 10:00:40,No such board,25.000,25.001,70",
  "2026-05-07 10:00:50,White board,25.000,-3,70",
].join("\n");

test("a CSV of good and bad rows: the preview lists the bad ones, the good ones are imported", async () => {
  const { context, page } = await as(w.users.qa.email);
  await page.goto("/review/import");
  await page.getByLabel("Sensor").selectOption(w.passing.id);
  await page.getByLabel("Site", { exact: true }).selectOption(w.site.id);
  await page.getByLabel("CSV file").setInputFiles({ name: "tripod-export.csv", mimeType: "text/csv", buffer: Buffer.from(CSV) });
  await page.getByTestId("import-counts").waitFor();
  await page.getByLabel("Sensor range *").selectOption("Range [m]");
  expect(await page.getByTestId("import-counts").textContent()).toMatch(/3 valid rows, 3 with errors/);
  const errors = (await page.getByTestId("import-row-errors").textContent()) ?? "";
  expect(errors).toMatch(/Row 5: Time: “yesterday” is not a date and time/);
  expect(errors).toMatch(/Row 6: Target “No such board” is not one of this site's targets\n?\s*Row 7/);
  expect(errors).toMatch(/Row 7: Sensor range: must be above 0/);
  if (SHOTS) await page.screenshot({ path: join(SHOTS, "import-preview.png"), fullPage: true });
  await page.getByRole("button", { name: "Import 3 valid rows" }).click();
  await page.getByText("3 imported, 0 already there, 0 refused.").waitFor();
  await context.close();
});

test.runIf(!!SHOTS)("screenshots of every review screen in both themes", async () => {
  const { context, page } = await as(w.users.qa.email, { width: 1180, height: 820 });
  const screens: [string, string, string][] = [
    ["overview", "/review", "sensor-overview"],
    ["report", `/review/sensors/${w.failing.id}`, "tests-table"],
    ["print", `/review/sensors/${w.failing.id}/print`, "print-report"],
    ["map", `/review/sensors/${w.failing.id}/map`, "map-legend"],
    ["import", "/review/import", ""],
  ];
  for (const theme of ["light", "dark"]) {
    if (theme === "dark") {
      await page.goto("/review");
      await page.getByRole("button", { name: "Switch to dark theme" }).click();
      await page.waitForFunction(() => document.documentElement.classList.contains("dark"));
    }
    for (const [name, path, testId] of screens) {
      await page.goto(path);
      if (testId) await page.getByTestId(testId).waitFor();
      if (name === "map") await page.locator('[data-map-ready="true"]:not([data-shots="0"])[data-shots]').waitFor({ timeout: 30_000 });
      await page.waitForTimeout(900);
      await page.screenshot({ path: join(SHOTS!, `${name}-${theme}.png`), fullPage: true });
    }
  }
  await page.emulateMedia({ media: "print" });
  await page.goto(`/review/sensors/${w.failing.id}/print`);
  await page.waitForTimeout(900);
  await page.screenshot({ path: join(SHOTS!, "print-media.png"), fullPage: true });
  await context.close();
});
