// issue 14 (p14): the tapes a project's crews may use, end to end in real Chromium. The admin
// ticks a tape in the project page's "Tapes and reference EDMs" section and saves; the crew's
// tablet, copying its reference data, then offers that tape (and the project's other one) for a
// session of the project — and not a tape the project does not list.
// PROJECT_SHOTS_DIR=<dir> writes PNGs of the section (both themes) and the tablet's form to look at.
import { mkdirSync } from "node:fs";
import { join } from "node:path";
import { afterAll, beforeAll, expect, test } from "vitest";
import type { Browser } from "playwright-core";
import { launchBrowser, newContext, signInAs, useServerEnv } from "./helpers";
import { e2eProject } from "./field-fixtures";

let browser: Browser;
const tag = `Tapes ${Date.now().toString(36)}`;
let world: { sensorId: string; siteId: string; projectId: string; listed: { id: string; label: string }; added: { id: string; label: string }; other: { id: string; label: string } };

beforeAll(async () => {
  browser = await launchBrowser();
  useServerEnv();
  const { makeSensor, makeSite, makeTape } = await import("../support/registry-fixtures");
  const sensor = await makeSensor({ label: `Roof scanner ${tag}`, kind: "pulsed", wavelengthNm: 905, toleranceMm: 5, tolerancePpm: 10, appliesAirCorrection: true });
  const site = await makeSite({ name: `Fernhollow yard ${tag}`, targets: [{ label: "Grey board", reflectancePct: 50, referenceM: 25 }] });
  const listed = await makeTape({ label: `Steel tape 30 m ${tag}` });
  const added = await makeTape({ label: `Steel tape 50 m ${tag}` });
  const other = await makeTape({ label: `Steel tape 20 m ${tag} (other job)` });
  const project = await e2eProject(tag, [sensor.id], [site.id], { tapeIds: [listed.id] });
  world = { sensorId: sensor.id, siteId: site.id, projectId: project.id, listed, added, other };
});
afterAll(async () => {
  await browser?.close();
});

test("the admin adds a tape to a project on its page; the crew's tablet offers it for a session of that project, and not another job's tape", async () => {
  const admin = await newContext(browser, { viewport: { width: 1024, height: 900 } });
  await signInAs(admin, "admin@e2e.test");
  const page = await admin.newPage();
  page.on("pageerror", (e) => console.warn("pageerror:", e.message));
  await page.goto(`/admin/projects/${world.projectId}`);
  const section = page.getByTestId("project-tapes-edms");
  await section.getByRole("heading", { name: "Tapes and reference EDMs" }).waitFor();
  const box = (label: string) => section.getByRole("checkbox", { name: label, exact: true });
  expect(await box(world.listed.label).isChecked()).toBe(true);
  expect(await box(world.added.label).isChecked()).toBe(false);
  await box(world.added.label).check();
  const dir = process.env.PROJECT_SHOTS_DIR;
  if (dir) {
    mkdirSync(dir, { recursive: true });
    await section.screenshot({ path: join(dir, "project-tapes-edms-light.png") });
  }
  await page.getByRole("button", { name: "Save changes" }).click();
  await page.waitForURL("**/admin/projects");
  await page.getByText(/saved \(.*tapeIds.*\)/).waitFor();
  await page.goto(`/admin/projects/${world.projectId}`);
  expect(await box(world.added.label).isChecked()).toBe(true);
  if (dir) {
    await page.getByRole("button", { name: "Switch to dark theme" }).click();
    await page.locator("html.dark").waitFor({ state: "attached" });
    await section.screenshot({ path: join(dir, "project-tapes-edms-dark.png") });
    await page.getByRole("button", { name: "Switch to daylight theme" }).click();
  }
  await admin.close();

  const tablet = await newContext(browser, { viewport: { width: 1280, height: 800 } });
  await signInAs(tablet, "crew@e2e.test");
  const field = await tablet.newPage();
  field.on("pageerror", (e) => console.warn("pageerror:", e.message));
  await field.goto("/field");
  await field.locator('[data-testid="offline-ready"][data-ready="true"]').waitFor({ timeout: 30_000 });
  await field.getByLabel("Sensor", { exact: true }).selectOption(world.sensorId);
  await field.getByLabel("Site", { exact: true }).selectOption(world.siteId);
  await field.getByLabel("Air temperature (°C)").fill("16");
  await field.getByRole("button", { name: "Start session" }).click();
  await field.waitForURL(/\/field\/session\/[0-9a-f-]{36}$/);
  await field.getByLabel("Steel tape", { exact: true }).check();
  const tapeSelect = field.getByLabel("Tape", { exact: true });
  await tapeSelect.waitFor();
  const offered = await tapeSelect.locator("option").evaluateAll((os) => os.map((o) => (o as HTMLOptionElement).value).filter(Boolean));
  expect(offered.sort()).toEqual([world.added.id, world.listed.id].sort());
  expect(offered).not.toContain(world.other.id);
  if (dir) await field.screenshot({ path: join(dir, "tablet-tape-choice.png"), fullPage: true });
  await tablet.close();
});

test("a viewer of the project reads its tape's page (no edit form); another job's tape is not found", async () => {
  const context = await newContext(browser, { viewport: { width: 1024, height: 800 } });
  await signInAs(context, "viewer@e2e.test");
  const page = await context.newPage();
  await page.goto("/admin/tapes");
  await page.getByRole("link", { name: world.listed.label }).click();
  await page.waitForURL(`**/admin/tapes/${world.listed.id}`);
  const summary = page.getByTestId("tape-summary");
  await summary.waitFor();
  expect(await summary.textContent()).toContain(`E2E project ${tag}`);
  expect(await page.getByRole("button", { name: "Save changes" }).count()).toBe(0);
  expect(await page.getByRole("link", { name: world.other.label }).count()).toBe(0);
  const dir = process.env.PROJECT_SHOTS_DIR;
  if (dir) await page.screenshot({ path: join(dir, "viewer-tape-page.png"), fullPage: true });
  const res = await page.goto(`/admin/tapes/${world.other.id}`);
  expect(res?.status()).toBe(404);
  await context.close();
});
