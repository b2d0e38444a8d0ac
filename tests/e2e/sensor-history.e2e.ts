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
const biases = [0.2, 0.5, 0.9, 1.2, 1.6, 2.1, 2.3];
const dates = ["2026-03-02", "2026-04-01", "2026-05-04", "2026-06-01", "2026-07-01", "2026-08-03", "2026-09-01"];

beforeAll(async () => {
  browser = await launchBrowser();
  useServerEnv();
  const { makeSensor, makeSite, makeUser, apiRequest, call } = await import("../support/registry-fixtures");
  const { action: syncAction } = await import("~/routes/api.sync");
  const crew = await makeUser("crew");
  const sensor = await makeSensor({
    label: "Handheld rangefinder HR-3 (drifting)",
    toleranceMm: 5,
    tolerancePpm: 10,
    certNumber: "EML-S-2025-0788",
    certLaboratory: "Eastbank Metrology Lab (invented)",
    certIssued: "2025-07-01",
    certDue: "2026-07-01",
  });
  sensorId = sensor.id;
  const site = await makeSite({ name: "Fernhollow quarry baseline (history)" });
  // api.md v1.1: the syncing crew and the reading QA lead are members of a project holding both
  const { e2eProject } = await import("./field-fixtures");
  const project = await e2eProject("history", [sensor.id], [site.id]);
  const { addMemberIds } = await import("../support/registry-fixtures");
  await addMemberIds(project.id, crew.id);
  const sessions = dates.map((d) => ({ id: crypto.randomUUID(), sensorId, siteId: site.id, startedAt: `${d}T08:00:00+02:00`, airTempC: 15, pressureHpa: 1010, humidityPct: 60 }));
  const shots = sessions.flatMap((s, i) =>
    [-0.4, 0, 0.4].map((d, k) => ({
      id: crypto.randomUUID(),
      sessionId: s.id,
      takenAt: `${dates[i]}T09:0${k}:00+02:00`,
      reference: { method: "edm", distanceM: 40 + 10 * k },
      readings: { rangesM: [40 + 10 * k + (biases[i] + d) / 1000] },
      reflectancePct: 50,
      illuminanceKlux: 20,
    })),
  );
  const r = await call(syncAction, apiRequest("/api/sync", { user: crew, json: { deviceId: "tablet-e2e-h", sessions, shots } }));
  expect(r.status).toBe(200);
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
