// Issue 11: the CSV import preview flags a row whose error is over a metre at a reference above
// 1 m ("implausible — mm typed as m?", ranging.md §9) and leaves it out of "Import" until the
// user fixes the unit or confirms it; a reading beyond 10 km shows the sync API's own message.
import { join } from "node:path";
import { afterAll, beforeAll, expect, test } from "vitest";
import type { Browser } from "playwright-core";
import { launchBrowser, newContext, signInAs, useServerEnv } from "./helpers";

const SHOTS = process.env.REVIEW_SCREENSHOTS;
let browser: Browser;
let sensorId: string;
let siteId: string;

beforeAll(async () => {
  useServerEnv();
  const fx = await import("../support/registry-fixtures");
  const sensor = await fx.makeSensor({ label: "Tripod scanner P2", kind: "pulsed", appliesAirCorrection: true, toleranceMm: 5, tolerancePpm: 10 });
  const site = await fx.makeSite({ name: "Fernhollow quarry range", targets: [{ label: "Board A", reflectancePct: 50 }] });
  sensorId = sensor.id;
  siteId = site.id;
  const { e2eProject } = await import("./field-fixtures");
  await e2eProject("import", [sensorId], [siteId]); // issue 14
  browser = await launchBrowser();
});
afterAll(async () => {
  await browser?.close();
});

// The export writes millimetres; the user first maps the column as metres.
const CSV = [
  "Timestamp,Board,Ref dist [m],Range [mm]",
  "2026-05-08 10:00:00,Board A,4.500,4503",
  "2026-05-08 10:00:10,Board A,4.500,4.5012",
  "2026-05-08 10:00:20,Board A,20.000,20003",
  "2026-05-08 10:00:30,Board A,4.500,4.4991",
].join("\n");

test("an implausible row waits for a confirmation; a reading beyond 10 km is an error with the server's wording", async () => {
  const context = await newContext(browser, { viewport: { width: 1280, height: 1400 } });
  await signInAs(context, "crew@e2e.test");
  const page = await context.newPage();
  await page.goto("/review/import");
  await page.getByLabel("Sensor").selectOption(sensorId);
  await page.getByLabel("Site", { exact: true }).selectOption(siteId);
  await page.getByLabel("CSV file").setInputFiles({ name: "p2-export.csv", mimeType: "text/csv", buffer: Buffer.from(CSV) });
  await page.getByTestId("import-counts").waitFor();
  await page.getByLabel("Sensor range *").selectOption("Range [mm]");
  await page.getByLabel("Unit of the sensor range").selectOption("m");
  const counts = page.getByTestId("import-counts");
  expect((await counts.textContent())?.replace(/\s+/g, " ")).toBe("2 valid rows, 1 with errors, 1 implausible (mm typed as m?) awaiting your check.");
  const problem = (row: number) => page.locator(`tr[data-row="${row}"] [data-testid="row-problem"]`).textContent();
  expect(await problem(2)).toBe("⚠ implausible — mm typed as m?");
  expect(await problem(4)).toBe("✗ range must be greater than 0 and at most 10000 m");
  expect(await problem(3)).toBe("✓ ready");
  if (SHOTS) await page.screenshot({ path: join(SHOTS, "import-implausible.png"), fullPage: true });
  await page.getByRole("button", { name: "Import 2 valid rows" }).waitFor();

  await page.getByLabel(/Row 2: range 4,?503\.000 m against 4\.500 m/).check();
  expect(await problem(2)).toBe("⚠ implausible — mm typed as m? (confirmed)");
  expect((await counts.textContent())?.replace(/\s+/g, " ")).toBe("3 valid rows, 1 with errors.");
  await page.getByRole("button", { name: "Import 3 valid rows" }).click();
  await page.getByText("3 imported, 0 already there, 0 refused.").waitFor();
  await context.close();
});
