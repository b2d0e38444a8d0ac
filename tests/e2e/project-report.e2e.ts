// Issue 14, the project verification report in a real Chromium against the built server: the
// page a project member opens, printed to PDF with Chromium's print-to-PDF and read back with
// poppler's pdftotext — every page numbered "page n of N", no near-empty page, the document's
// number, version and SHA-256 on it, and the accuracy statement leading in the rule's style
// (RMSE by default, the NSSDA 95 % figure with nssda95). A non-member gets 404.
// With REVIEW_SCREENSHOTS=<dir> it also writes screen and print screenshots, light and dark.
import { execFileSync } from "node:child_process";
import { existsSync, mkdirSync, rmSync, writeFileSync } from "node:fs";
import { join, resolve } from "node:path";
import { afterAll, beforeAll, expect, test } from "vitest";
import type { Browser, BrowserContext, Page } from "playwright-core";
import { launchBrowser, signInAs, useServerEnv, baseURL } from "./helpers";
import type { ReviewWorld } from "../support/review-fixtures";

let browser: Browser;
let w: ReviewWorld;
let outsiderEmail: string;
const SHOTS = process.env.REVIEW_SCREENSHOTS;
const TMP = resolve(`tests/.tmp/project-report-${process.pid}`);

beforeAll(async () => {
  useServerEnv();
  const { reviewWorld } = await import("../support/review-fixtures");
  const { makeUser } = await import("../support/registry-fixtures");
  const { getDb } = await import("~/db/client.server");
  const { projectMembers, sensors } = await import("~/db/schema");
  const { eq } = await import("drizzle-orm");
  w = await reviewWorld();
  outsiderEmail = (await makeUser("viewer")).email;
  for (const u of [w.users.viewer, w.users.qa]) await getDb().insert(projectMembers).values({ projectId: w.project.id, userId: u.id }).onConflictDoNothing();
  await getDb().update(sensors).set({ laserClass: "1M" }).where(eq(sensors.id, w.failing.id));
  // an exclusion with its reason, so the document lists one
  const { excludeShot } = await import("~/models/exclusions.server");
  await excludeShot({ id: w.users.qa.id, role: "qa" }, w.shotsOf(w.failing.id)[3]!.id, { reason: "board knocked over by the wind" });
  browser = await launchBrowser();
  mkdirSync(TMP, { recursive: true });
  if (SHOTS) mkdirSync(SHOTS, { recursive: true });
}, 120_000);

afterAll(async () => {
  await browser?.close();
  rmSync(TMP, { recursive: true, force: true });
  // the e2e database is shared by the test files: retire this file's sensors (as review-print does)
  if (w) {
    const { getDb } = await import("~/db/client.server");
    const { sensors } = await import("~/db/schema");
    const { inArray } = await import("drizzle-orm");
    const at = new Date().toISOString();
    await getDb()
      .update(sensors)
      .set({ retiredAt: at, updatedAt: at })
      .where(inArray(sensors.id, [w.failing.id, w.passing.id]));
  }
});

async function as(email: string, viewport = { width: 1280, height: 900 }): Promise<{ context: BrowserContext; page: Page }> {
  const context = await browser.newContext({ baseURL: baseURL(), viewport, timezoneId: "Europe/Berlin" });
  await signInAs(context, email);
  return { context, page: await context.newPage() };
}

function pdfPages(file: string, layout = true): string[] {
  return execFileSync("pdftotext", [...(layout ? ["-layout"] : []), file, "-"], { encoding: "utf8" })
    .split("\f")
    .slice(0, -1);
}

const path = () => `/review/projects/${w.project.id}/report`;

async function openReport(page: Page, url = path()) {
  await page.goto(url);
  await page.getByTestId("project-report").waitFor();
  // the charts (bias per session, one per sensor with shots) are drawn in the browser
  await page.waitForFunction(() => document.querySelectorAll('[data-testid="project-report"] figure svg[aria-hidden="true"]').length >= 2);
}

async function printToPdf(page: Page, name: string) {
  const file = join(TMP, `${name}.pdf`);
  writeFileSync(file, await page.pdf({ preferCSSPageSize: true, printBackground: true }));
  return file;
}

async function setStatement(statement: "rmse" | "nssda95") {
  const { getDb } = await import("~/db/client.server");
  const { projects } = await import("~/db/schema");
  const { eq } = await import("drizzle-orm");
  await getDb().update(projects).set({ statement }).where(eq(projects.id, w.project.id));
}

test("printed, the report numbers its pages, has no empty page, carries its number, version and hash, and leads with the statement in the rule's style", async () => {
  if (!existsSync("/usr/bin/pdftotext")) throw new Error("pdftotext missing: apt-get install -y poppler-utils");
  const { context, page } = await as(w.users.viewer.email);
  for (const style of ["rmse", "nssda95"] as const) {
    await setStatement(style);
    await openReport(page);
    const report = page.getByTestId("project-report");
    const version = Number(await report.getAttribute("data-version"));
    const hash = (await report.getAttribute("data-sha256"))!;
    const number = (await page.getByTestId("document-number").textContent())!.trim();
    expect(await report.getAttribute("data-statement")).toBe(style);
    const file = await printToPdf(page, `project-${style}`);
    const pages = pdfPages(file);
    const N = pages.length;
    expect(N).toBeGreaterThan(1);
    pages.forEach((text, i) => {
      expect(text, `page ${i + 1}`).toMatch(new RegExp(`page ${i + 1} of ${N}`));
      // the running footer carries the number with its version and the start of the hash
      expect(text, `footer of page ${i + 1}`).toContain(`${number}`);
      expect(text.replace(/\s+/g, " "), `footer of page ${i + 1}`).toContain(`SHA-256 ${hash.slice(0, 16)}`);
      // no near-empty page: each carries more than its running footer
      expect(
        text
          .replace(/page \d+ of \d+/, "")
          .replace(/Project verification report SB-\S+ · SHA-256 \S+ · .*/g, "")
          .replace(/\s+/g, " ")
          .trim().length,
        `text on page ${i + 1}`,
      ).toBeGreaterThan(300);
    });
    expect(number).toMatch(new RegExp(`^SB-[A-Z0-9-]+-v${version}$`));
    const first = pages[0]!.replace(/\s+/g, " ");
    // the text in reading order (table cells whole, not side by side as -layout draws them)
    const firstRead = pdfPages(file, false)[0]!.replace(/\s+/g, " ");
    expect(first).toMatch(/Project verification report/);
    // the whole hash on page 1 (it may wrap: compare without spaces)
    expect(pages[0]!.replace(/\s+/g, "")).toContain(hash);
    // the statement leads: on page 1, before the acceptance rule, one line per sensor
    expect(first).toMatch(/Accuracy statement/);
    if (SHOTS) writeFileSync(join(SHOTS, `project-print-${style}-page1.txt`), firstRead);
    const statementAt = firstRead.indexOf("Accuracy statement");
    expect(statementAt).toBeGreaterThan(-1);
    expect(statementAt).toBeLessThan(firstRead.indexOf("Acceptance rule"));
    const sentence =
      style === "rmse"
        ? /Tested \d+\.\d mm range RMSE against \d+ check-shots, reference not included/
        : /Tested \d+\.\d mm range accuracy at 95 % confidence level \(NSSDA\) against \d+ check-shots, reference not included/;
    const hit = firstRead.slice(statementAt).match(sentence);
    expect(hit, `${style} statement on page 1`).not.toBeNull();
    if (style === "rmse") expect(first).not.toMatch(/accuracy at 95 %/);
    const all = pages.join("\n").replace(/\s+/g, " ");
    expect(all).toMatch(/Acceptance rule/);
    expect(all).toMatch(/board knocked over by the wind/);
    expect(all).toMatch(/Sites, sessions and dates/);
    expect(all).toMatch(/Class 1M/);
    if (SHOTS) execFileSync("pdftoppm", ["-png", "-r", "70", file, join(SHOTS, `project-print-${style}`)]);
  }
  await setStatement("rmse");
  await context.close();
}, 180_000);

test("older versions stay readable and say they are superseded; a non-member gets 404", async () => {
  const { context, page } = await as(w.users.qa.email);
  // a change of the rule's statement style makes a new version
  await openReport(page);
  await setStatement((await page.getByTestId("project-report").getAttribute("data-statement")) === "rmse" ? "nssda95" : "rmse");
  await openReport(page);
  const latest = Number(await page.getByTestId("project-report").getAttribute("data-version"));
  expect(latest).toBeGreaterThan(1); // the statement switches above made new versions
  await page.getByTestId("versions").getByRole("link", { name: /-v1$/ }).click();
  await page.getByTestId("superseded").waitFor();
  expect(await page.getByTestId("project-report").getAttribute("data-version")).toBe("1");
  expect(await page.getByTestId("superseded").textContent()).toContain(`the current version is ${latest}`);
  await setStatement("rmse");
  await context.close();

  const other = await as(outsiderEmail);
  const res = await other.page.goto(path());
  expect(res!.status()).toBe(404);
  const api = await other.page.request.get(`/api/projects/${w.project.id}/bundle.zip`);
  expect(api.status()).toBe(404);
  await other.context.close();
}, 120_000);

test.runIf(!!SHOTS)(
  "screenshots of the project report, screen and print, light and dark",
  async () => {
    const { context, page } = await as(w.users.viewer.email, { width: 1180, height: 820 });
    for (const theme of ["light", "dark"]) {
      if (theme === "dark") {
        await page.goto("/review");
        await page.getByRole("button", { name: "Switch to dark theme" }).click();
        await page.waitForFunction(() => document.documentElement.classList.contains("dark"));
      }
      await page.goto("/review");
      await page.getByTestId("project-reports").waitFor();
      await page.screenshot({ path: join(SHOTS!, `project-overview-${theme}.png`), fullPage: true });
      await openReport(page);
      await page.waitForTimeout(900);
      await page.screenshot({ path: join(SHOTS!, `project-report-${theme}.png`), fullPage: true });
      await page.screenshot({ path: join(SHOTS!, `project-report-${theme}-top.png`) });
      const file = await printToPdf(page, `project-${theme}`);
      execFileSync("pdftoppm", ["-png", "-r", "70", file, join(SHOTS!, `project-pdf-${theme}`)]);
    }
    await context.close();
  },
  180_000,
);
