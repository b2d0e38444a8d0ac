// Check-shots from a scan and from depth frames in the browser (issue 18), against the built
// server: a crew member chooses the session and station, uploads a LAS file written from known
// geometry, sees one row per target (found ones with their plot, the sparse board "not found"
// with the reason), accepts, and importing the same file again stores nothing new. Then a depth
// camera: frames loaded, shown in false colour, a box dragged on the board, figures, accept.
// With SCAN_SCREENSHOTS=<dir>, the screens are saved for a person to look at.
import { mkdirSync } from "node:fs";
import { join } from "node:path";
import { afterAll, beforeAll, expect, test } from "vitest";
import type { Browser, Page } from "playwright-core";
import { launchBrowser, newContext, seriousA11yViolations, signInAs, useServerEnv } from "./helpers";
import { boardPoints, boardTruth, clutter, depthPng, lasFile, planeDepth, rng, type Board, type Camera, type V3 } from "../support/scan-fixtures";

let browser: Browser;
const SHOTS = process.env.SCAN_SCREENSHOTS;
const w = {} as {
  crew: { email: string };
  sessionId: string;
  camSessionId: string;
  stationId: string;
  targetIds: string[];
  camTargetId: string;
};

const mark: V3 = [512_345.6789, 6_350_123.4567, 101.2345];
const IH = 1.5;
const O: V3 = [mark[0], mark[1], mark[2] + IH];
const boards: Board[] = [
  { centre: [O[0] + 24, O[1] + 7, O[2] - 0.4], offsetMm: 3.2, tiltDeg: 0, halfM: 0.2, perSide: 45, noiseMm: 1 },
  { centre: [O[0] - 41, O[1] + 52, O[2] + 1.1], offsetMm: -6.5, tiltDeg: 35, halfM: 0.2, perSide: 45, noiseMm: 2 },
  { centre: [O[0] + 80, O[1] - 95, O[2] + 3.0], offsetMm: 14, tiltDeg: 60, halfM: 0.2, perSide: 40, noiseMm: 1.5 },
];
const sparse: Board = { centre: [O[0] + 10, O[1] - 10, O[2]], offsetMm: 0, tiltDeg: 0, halfM: 0.2, perSide: 5, noiseMm: 1 };
const cam: Camera = { width: 160, height: 120, fx: 120, fy: 121, cx: 79.5, cy: 60.2 };
const box = { u0: 96, v0: 28, u1: 128, v1: 56 };

beforeAll(async () => {
  useServerEnv();
  const { makeUser, makeSensor, makeSite } = await import("../support/registry-fixtures");
  const { ingestSync } = await import("~/models/sync.server");
  const crew = await makeUser("crew");
  const scanner = await makeSensor({ label: "Tripod scanner TS-4", appliesAirCorrection: true, toleranceMm: 3, tolerancePpm: 20 });
  const site = await makeSite({
    name: "Fernhollow yard baseline",
    stations: [{ label: "S1 pillar", grid: { e: mark[0], n: mark[1], h: mark[2] } }],
    targets: [...boards, sparse].map((b, i) => ({ label: `Board ${i + 1}`, reflectancePct: 80, grid: { e: b.centre[0], n: b.centre[1], h: b.centre[2] } })),
  });
  const camera = await makeSensor({ label: "Depth camera DC-1", intrinsics: { fx: cam.fx, fy: cam.fy, cx: cam.cx, cy: cam.cy }, depthScaleMm: 0.25, appliesAirCorrection: true });
  const lab = await makeSite({ name: "Fernhollow lab wall", targets: [{ label: "Wall board", reflectancePct: 85, referenceM: 3 }] });
  // issue 14: each session's sensor and site share one project of the crew's
  const { makeProject } = await import("../support/registry-fixtures");
  await makeProject({ name: "Scan workspace", sensorIds: [scanner.id], siteIds: [site.id], memberIds: [crew.id] });
  await makeProject({ name: "Lab workspace", sensorIds: [camera.id], siteIds: [lab.id], memberIds: [crew.id] });
  const sessionId = crypto.randomUUID();
  const camSessionId = crypto.randomUUID();
  const res = await ingestSync(
    { id: crew.id, role: "crew" },
    {
      deviceId: "e2e",
      sessions: [
        { id: sessionId, sensorId: scanner.id, siteId: site.id, startedAt: "2026-05-08T08:00:00+02:00" },
        { id: camSessionId, sensorId: camera.id, siteId: lab.id, startedAt: "2026-05-08T09:00:00+02:00" },
      ],
      shots: [],
    },
  );
  expect(res.status).toBe(200);
  Object.assign(w, { crew, sessionId, camSessionId, stationId: site.stations[0].id, targetIds: site.targets.map((t) => t.id), camTargetId: lab.targets[0].id });
  browser = await launchBrowser();
  if (SHOTS) mkdirSync(SHOTS, { recursive: true });
});
afterAll(async () => {
  await browser?.close();
});

async function shot(page: Page, name: string) {
  if (SHOTS) await page.screenshot({ path: join(SHOTS, `${name}.png`), fullPage: true });
}

test("a scan: upload, one row per target with its plot, accept; the same file again stores nothing new", async () => {
  const context = await newContext(browser);
  await signInAs(context, w.crew.email);
  const page = await context.newPage();
  await page.goto("/review");
  await page.getByRole("link", { name: "Check-shots from a scan" }).click();
  await page.waitForURL("**/review/scans");
  // the form says what is missing instead of sending nothing
  await page.getByRole("button", { name: "Find the targets" }).click();
  await expect.poll(() => page.getByText("Choose the session the scan belongs to.").count(), { timeout: 30_000 }).toBe(1);

  await page.getByLabel("Session").selectOption(w.sessionId);
  await page.getByLabel("Station").selectOption(w.stationId);
  await page.getByLabel("Instrument height above the mark (m)").fill(String(IH));
  const pts = [
    ...boards.flatMap((b, i) => boardPoints(O, b, rng(10 + i))),
    ...boardPoints(O, sparse),
    ...clutter(
      O,
      [...boards, sparse].map((b) => b.centre),
      30_000,
    ),
  ];
  const las = Buffer.from(lasFile(pts, { version: 4, pointFormat: 6, offset: [512_000, 6_350_000, 100] }));
  await page.getByLabel(/Point cloud/).setInputFiles({ name: "yard-S1.las", mimeType: "application/octet-stream", buffer: las });
  await page.getByRole("button", { name: "Find the targets" }).click();
  const table = page.getByTestId("scan-rows");
  await table.waitFor();
  for (const [i, b] of boards.entries()) {
    const row = table.locator(`tr[data-target="${w.targetIds[i]}"]`);
    expect(await row.getAttribute("data-status")).toBe("found");
    const err = Number((await row.getByTestId("error-mm").textContent())!.replace("−", "-").replace("+", ""));
    expect(Math.abs(err - boardTruth(O, b).errorMm)).toBeLessThan(0.2);
    await page.getByTestId(`plot-${w.targetIds[i]}`).waitFor();
  }
  const missing = table.locator(`tr[data-target="${w.targetIds[3]}"]`);
  expect(await missing.textContent()).toMatch(/Not found: 25 points within 0.3 m/);
  expect(await seriousA11yViolations(page)).toEqual([]);
  await shot(page, "scan-preview");

  await page.getByRole("button", { name: "Accept 3 check-shots" }).click();
  await expect
    .poll(async () => (await page.getByTestId("commit-summary").count()) && page.getByTestId("commit-summary").textContent(), { timeout: 30_000 })
    .toMatch(/3 shots stored, 0 already stored, 0 refused/);
  await shot(page, "scan-accepted");
  // a photo of the board, attached as from the tablet
  const { encode } = await import("fast-png");
  const photo = Buffer.from(encode({ width: 4, height: 3, data: new Uint8Array(4 * 3 * 3).fill(128), depth: 8, channels: 3 }));
  await page.getByLabel("Attach a photo of Board 1").setInputFiles({ name: "board1.png", mimeType: "image/png", buffer: photo });
  await expect.poll(() => page.getByText("Photo board1.png attached.").count(), { timeout: 30_000 }).toBe(1);

  // the same file again: found, but nothing new is stored
  await page.getByRole("button", { name: "Find the targets" }).click();
  await page.getByRole("button", { name: "Accept 3 check-shots" }).click();
  await expect
    .poll(async () => (await page.getByTestId("commit-summary").count()) && page.getByTestId("commit-summary").textContent(), { timeout: 30_000 })
    .toMatch(/0 shots stored, 3 already stored/);
  await context.close();
});

test("depth frames: false colour with a legend, a box dragged on the board, figures, accept", async () => {
  const context = await newContext(browser);
  await signInAs(context, w.crew.email);
  const page = await context.newPage();
  await page.goto("/review/frames");
  await page.getByLabel("Session").selectOption(w.camSessionId);
  await page.getByLabel("Target").selectOption(w.camTargetId);
  expect(await page.getByLabel("Reference distance, camera to board (m)").inputValue()).toBe("3");
  const z = planeDepth(cam, box, 3.0042, 20, 6.5);
  const random = rng(21);
  const files = Array.from({ length: 5 }, (_, i) => ({ name: `wall-${i}.png`, mimeType: "image/png", buffer: Buffer.from(depthPng(cam, z, 0.25, 1.5, random)) }));
  await page.getByLabel("Frames (16-bit greyscale PNG)").setInputFiles(files);
  const frame = page.getByTestId("frame");
  await frame.waitFor();
  await expect.poll(() => page.getByLabel("Depth legend").textContent(), { timeout: 30_000 }).toMatch(/\d\.\d{3} m.*depth \(Z\).*6\.\d{3} m/);
  // drag from pixel (u0, v0) to (u1, v1): the frame is drawn 4 px per pixel
  await frame.scrollIntoViewIfNeeded();
  const r = (await frame.boundingBox())!;
  const s = r.width / cam.width;
  await page.mouse.move(r.x + (box.u0 + 0.5) * s, r.y + (box.v0 + 0.5) * s);
  await page.mouse.down();
  await page.mouse.move(r.x + (box.u1 + 0.5) * s, r.y + (box.v1 + 0.5) * s, { steps: 8 });
  await page.mouse.up();
  expect(await page.getByLabel("Box u0,v0,u1,v1 (pixels, inclusive)").inputValue()).toBe(`${box.u0},${box.v0},${box.u1},${box.v1}`);
  await shot(page, "frames-box");
  await page.getByRole("button", { name: "Measure the box" }).click();
  const table = page.getByTestId("scan-rows");
  await table.waitFor();
  const err = Number((await table.getByTestId("error-mm").textContent())!.replace("−", "-").replace("+", ""));
  expect(Math.abs(err - 4.2)).toBeLessThan(0.3);
  expect(await table.textContent()).toMatch(/Temporal noise/);
  expect(await seriousA11yViolations(page)).toEqual([]);
  await shot(page, "frames-figures");
  await page.getByRole("button", { name: "Accept the check-shot" }).click();
  await expect.poll(async () => (await page.getByTestId("commit-summary").count()) && page.getByTestId("commit-summary").textContent(), { timeout: 30_000 }).toMatch(/The check-shot is stored/);
  await context.close();
});
