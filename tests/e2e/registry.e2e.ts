// The registry in the browser: an admin prepares a new sensor and a test range with two targets
// through the screens (one refused submission on the way, nothing typed lost), then finds both
// in their lists. Rows made here are retired at the end (never deleted: the registry keeps history).
import { afterAll, beforeAll, expect, test } from "vitest";
import type { Browser, Page } from "playwright-core";
import { launchBrowser, newContext, seriousA11yViolations, signInAs } from "./helpers";

let browser: Browser;
beforeAll(async () => {
  browser = await launchBrowser();
});
afterAll(async () => {
  await browser?.close();
});

const stamp = Date.now().toString(36);

async function adminPage() {
  const context = await newContext(browser, { viewport: { width: 1024, height: 900 } });
  await signInAs(context, "admin@e2e.test");
  return { context, page: await context.newPage() };
}

async function retireByName(page: Page, listPath: string, name: string, what: string) {
  await page.goto(listPath);
  await page.getByRole("link", { name }).click();
  await page.getByText(`Retire “${name}”…`).click();
  await page.getByLabel(`Yes, retire “${name}”`).check();
  await page.getByRole("button", { name: `Retire ${what}` }).click();
  await page.waitForURL(`**${listPath}`);
}

test("an admin adds a sensor: a wrong wavelength is refused with its message, the typed values stay, then it saves and is listed", async () => {
  const { context, page } = await adminPage();
  const label = `Roof scanner ${stamp}`;
  await page.goto("/admin/sensors/new");
  await page.getByLabel("Label", { exact: true }).fill(label);
  await page.getByLabel("Serial number").fill(`FH-RS-${stamp}`);
  await page.getByLabel("Pulsed (time of flight)").check();
  await page.getByLabel("Laser wavelength").fill("9050");
  await page.getByLabel("Yes, it applies its own air correction").check();
  await page.getByLabel("a, constant part").fill("5");
  await page.getByLabel("b, part per distance").fill("10");
  await page.getByLabel("Calibration due").fill("2020-01-31");
  await page.getByRole("button", { name: "Add sensor" }).click();

  const error = page.getByText("The wavelength lies between 300 and 2000 nm");
  await error.waitFor();
  expect(await page.getByLabel("Laser wavelength").inputValue()).toBe("9050");
  expect(await page.getByLabel("Laser wavelength").getAttribute("aria-invalid")).toBe("true");
  expect(await page.getByLabel("Label", { exact: true }).inputValue()).toBe(label);
  expect(await page.getByText("±(5 mm + 10 ppm)").count()).toBeGreaterThan(0);
  expect(page.url()).toContain("/admin/sensors/new");

  await page.getByLabel("Laser wavelength").fill("905");
  await page.getByRole("button", { name: "Add sensor" }).click();
  await page.waitForURL("**/admin/sensors");
  await page.getByText(`Sensor “${label}” added.`).waitFor();
  const row = page.getByTestId("sensor-table").getByRole("row").filter({ hasText: label });
  expect(await row.count()).toBe(1);
  const text = (await row.textContent()) ?? "";
  expect(text).toContain(`FH-RS-${stamp}`);
  expect(text).toContain("±(5 mm + 10 ppm)");
  expect(text).toContain("905 nm");
  expect(await row.locator('[data-calibration="overdue"]').textContent()).toContain("Overdue");
  expect(await seriousA11yViolations(page)).toEqual([]);

  await retireByName(page, "/admin/sensors", label, "sensor");
  expect(await page.getByTestId("sensor-table").getByText(label).count()).toBe(0);
  await page.getByRole("link", { name: /Show retired sensors/ }).click();
  await page.waitForURL("**/admin/sensors?retired=show");
  await page.getByRole("link", { name: "Hide retired sensors" }).waitFor();
  expect(await page.getByTestId("sensor-table").getByRole("row").filter({ hasText: label }).getByText("Retired").count()).toBe(1);
  await context.close();
});

test("an admin adds a test range with a station and two targets (rows added with the list buttons) and finds it in the list", async () => {
  const { context, page } = await adminPage();
  const name = `Roadside range ${stamp}`;
  await page.goto("/admin/sites/new");
  await page.getByLabel("Name", { exact: true }).fill(name);

  await page.getByRole("button", { name: "+ Add a station" }).click();
  const station = page.getByTestId("station-row-0");
  await station.getByLabel("Label").fill("S1");

  const t1 = page.getByTestId("target-row-0");
  await t1.getByLabel("Label").fill("T10-dark");
  await t1.getByLabel("Reflectance").fill("10");
  await t1.getByLabel("Reference distance").fill("10.002");

  await page.getByRole("button", { name: "+ Add a target" }).click();
  const t2 = page.getByTestId("target-row-1");
  await t2.getByLabel("Label").fill("P30-prism");
  await t2.getByLabel("Reflectance").fill("150");
  await t2.getByLabel("Retro-reflective (prism or reflective sheeting)").check();
  await t2.getByLabel("Reference distance").fill("30.011");
  await page.getByRole("button", { name: "Add site" }).click();

  await t2.getByText("Reflectance lies between 0 and 100 %").waitFor();
  expect(await t2.getByLabel("Reflectance").inputValue()).toBe("150");
  expect(await t1.getByLabel("Label").inputValue()).toBe("T10-dark");
  await t2.getByLabel("Reflectance").fill("100");
  await page.getByRole("button", { name: "Add site" }).click();

  await page.waitForURL("**/admin/sites");
  await page.getByText(`Site “${name}” added with 2 targets.`).waitFor();
  const row = page.getByTestId("site-table").getByRole("row").filter({ hasText: name });
  expect(await row.count()).toBe(1);
  const text = (await row.textContent()) ?? "";
  expect(text).toContain("T10-dark, P30-prism");
  expect(await row.locator("td").nth(1).textContent()).toBe("1");

  // The stored rows, read back on the edit screen.
  await row.getByRole("link", { name }).click();
  expect(await page.getByTestId("target-row-1").getByLabel("Reference distance").inputValue()).toBe("30.011");
  expect(await page.getByTestId("target-row-1").getByLabel("Retro-reflective (prism or reflective sheeting)").isChecked()).toBe(true);
  expect(await seriousA11yViolations(page)).toEqual([]);

  await retireByName(page, "/admin/sites", name, "site");
  expect(await page.getByTestId("site-table").getByText(name).count()).toBe(0);
  await context.close();
});

test("a viewer reads the sensor list without edit links and may not open the new-sensor form", async () => {
  const context = await newContext(browser);
  await signInAs(context, "viewer@e2e.test");
  const page = await context.newPage();
  await page.goto("/admin/sensors");
  expect(await page.locator("h1").textContent()).toBe("Sensors");
  expect(await page.getByRole("link", { name: "+ New sensor" }).count()).toBe(0);
  const res = await page.goto("/admin/sensors/new");
  expect(res?.status()).toBe(403);
  await context.close();
});
