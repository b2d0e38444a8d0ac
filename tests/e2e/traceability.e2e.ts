// issue 15 in real Chromium: a crew starts a session with a sensor whose calibration
// certificate is past due on the session's date; the tablet's session screen flags it, with the
// laser class and its cautions, before the first shot. A sensor with a current certificate shows
// no flag. Screenshots go to SHOT_DIR (default /tmp) to be looked at.
import { afterAll, beforeAll, expect, test } from "vitest";
import type { Browser, Page } from "playwright-core";
import { launchBrowser, newContext, seriousA11yViolations, signInAs, useServerEnv } from "./helpers";

let browser: Browser;
let late: { id: string; label: string };
let current: { id: string; label: string };
let site: { id: string };
const SHOT_DIR = process.env.SHOT_DIR ?? "/tmp";

beforeAll(async () => {
  browser = await launchBrowser();
  useServerEnv();
  const { makeSensor, makeSite } = await import("../support/registry-fixtures");
  late = await makeSensor({
    label: "Tripod scanner TS-9 (lapsed)",
    wavelengthNm: 1550,
    laserClass: "3R",
    certNumber: "EML-S-2025-0412",
    certLaboratory: "Eastbank Metrology Lab (invented)",
    certIssued: "2024-05-05",
    certDue: "2025-05-05", // long past on any session started today
  });
  current = await makeSensor({ label: "Roof scanner RS-2 (current)", laserClass: "1", certNumber: "EML-S-2099-0001", certIssued: "2026-01-01", certDue: "2099-12-31" });
  site = await makeSite({ name: "Fernhollow yard (traceability)", targets: [{ label: "Grey board", reflectancePct: 50, referenceM: 25 }] });
  const { e2eProject } = await import("./field-fixtures");
  await e2eProject("traceability", [late.id, current.id], [site.id]); // issue 14
});
afterAll(async () => {
  await browser?.close();
});

async function startSession(page: Page, sensorId: string) {
  await page.goto("/field");
  await page.getByRole("heading", { name: "Start session" }).waitFor();
  // the tablet's copy of the reference data holds the sensors made for this test
  await page.waitForFunction((id) => [...document.querySelectorAll("option")].some((o) => (o as HTMLOptionElement).value === id), sensorId);
  await page.getByLabel("Sensor", { exact: true }).selectOption(sensorId);
  await page.getByLabel("Site", { exact: true }).selectOption(site.id);
  await page.getByRole("button", { name: "Start session" }).click();
  await page.waitForURL(/\/field\/session\/[0-9a-f-]{36}$/);
}

test("a certificate past due on the session's date is flagged on the session screen before the first shot", async () => {
  const context = await newContext(browser, { viewport: { width: 1024, height: 1366 } });
  await signInAs(context, "crew@e2e.test");
  const page = await context.newPage();
  await startSession(page, late.id);

  const flag = page.getByTestId("certificate-past-due");
  await flag.waitFor();
  expect(await flag.isVisible()).toBe(true);
  const text = (await flag.textContent()) ?? "";
  expect(text).toContain("Certificate past due on this session's date");
  expect(text).toContain("EML-S-2025-0412");
  expect(text).toContain("2025-05-05");
  // before the first shot: the flag stands above the form and no shot is listed yet
  expect(await page.getByRole("heading", { name: /Shots in this session/ }).textContent()).toContain("(0)");
  const flagTop = (await flag.boundingBox())!.y;
  const formTop = (await page.getByRole("heading", { name: "Target and reference distance" }).boundingBox())!.y;
  expect(flagTop).toBeLessThan(formTop);
  // the laser class with its cautions
  const laser = (await page.getByTestId("laser-class").textContent()) ?? "";
  expect(laser).toContain("Laser class 3R (IEC 60825-1)");
  expect(laser).toContain("avoid direct eye exposure");
  await page.screenshot({ path: `${SHOT_DIR}/h15-tablet-past-due.png`, fullPage: false });
  expect(await seriousA11yViolations(page)).toEqual([]);

  // a current certificate: no flag, the class still shown
  await startSession(page, current.id);
  await page.getByTestId("laser-class").waitFor();
  expect(await page.getByTestId("certificate-past-due").count()).toBe(0);
  expect(await page.getByTestId("laser-class").textContent()).toContain("Laser class 1 (IEC 60825-1)");
  await context.close();
});
