// issue 15 in real Chromium: a QA lead opens a sensor's history and sees the drift marked — the
// bias trend with its t test, the run of sessions moving up (Nelson's test 3) as triangles on
// the chart and in the table — and the sessions held after the certificate fell due, squared on
// the chart. Screenshots go to SHOT_DIR (default /tmp) to be looked at.
import { afterAll, beforeAll, expect, test } from "vitest";
import type { Browser } from "playwright-core";
import { launchBrowser, newContext, seriousA11yViolations, signInAs, useServerEnv } from "./helpers";

let browser: Browser;
let sensorId: string;
const SHOT_DIR = process.env.SHOT_DIR ?? "/tmp";

beforeAll(async () => {
  browser = await launchBrowser();
  useServerEnv();
  const { historyWorld } = await import("../support/history-world");
  const { addMemberIds } = await import("../support/registry-fixtures");
  const { e2eProject } = await import("./field-fixtures");
  const world = await historyWorld({
    sensor: { label: "Handheld rangefinder HR-3 (drifting)", certNumber: "EML-S-2025-0788", certLaboratory: "Eastbank Metrology Lab (invented)" },
    siteName: "Fernhollow quarry baseline (history)",
    deviceId: "tablet-e2e-h",
    // api.md v1.1: the syncing crew and the reading QA lead are members of a project holding both
    share: async (crew, sensor, site) => addMemberIds((await e2eProject("history", [sensor.id], [site.id])).id, crew.id),
  });
  sensorId = world.sensor.id;
  expect(world.sync.status).toBe(200);
});
afterAll(async () => {
  await browser?.close();
});

test("the history page marks the drift and the sessions past the certificate's due date", async () => {
  const context = await newContext(browser, { viewport: { width: 1280, height: 1100 } });
  await signInAs(context, "qa@e2e.test");
  const page = await context.newPage();
  await page.goto(`/review/sensors/${sensorId}/history`);
  const summary = page.getByTestId("history-drift");
  await summary.waitFor();
  const text = (await summary.textContent()) ?? "";
  expect(text).toMatch(/Trend: \+\d+\.\d\d mm per year/);
  expect(text).toContain("significant drift");
  expect(text).toContain("7 sessions in a row moving up");
  expect(text).toContain("2 sessions held with the certificate past due");
  // the chart: a triangle per session of the run, a square per past-due session, the trend line
  // (the plot is drawn after hydration, inside its labelled box; the legend's swatches are svgs too)
  const svg = page
    .getByRole("img", { name: /^Bias per session over time/ })
    .locator("svg")
    .first();
  await svg.waitFor();
  const labels = await svg.locator("text").allTextContents();
  expect(labels.filter((t) => t === "drift")).toHaveLength(7);
  expect(labels.filter((t) => t === "cert. past due")).toHaveLength(2);
  const caption = (await page.locator("figure figcaption").first().textContent()) ?? "";
  expect(caption).toContain("Nelson's test 3");
  expect(caption).toContain("certificate past due");
  expect(caption).toContain("bias trend");
  // the table: the run and the certificate per session
  const rows = page.getByTestId("history-sessions").locator("tbody tr");
  expect(await rows.count()).toBe(7);
  expect(await rows.nth(0).textContent()).toContain("in a run up");
  expect(await rows.nth(4).textContent()).toContain("valid");
  expect(await rows.nth(5).textContent()).toContain("past due");
  expect(await seriousA11yViolations(page)).toEqual([]);
  await page.screenshot({ path: `${SHOT_DIR}/h15-history-drift.png`, fullPage: true });
  await context.close();
});
