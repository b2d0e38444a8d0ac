// Project membership in the browser (issue 14): an admin adds a person to a project on the project
// page (an address of no user is refused with its message and the typed text kept), then removes
// them after the second step; a client's viewer lands on their own project's sensor verdicts and
// sees nothing of another client's project; a 403 page offers no tablet work.
// Screenshots for a person to look at go to $MEMBERS_SCREENSHOTS when set.
import { mkdirSync } from "node:fs";
import { join } from "node:path";
import { afterAll, beforeAll, expect, test } from "vitest";
import type { Browser, Page } from "playwright-core";
import { launchBrowser, newContext, seriousA11yViolations, signInAs, useServerEnv } from "./helpers";

let browser: Browser;
const stamp = Date.now().toString(36);
const shots = process.env.MEMBERS_SCREENSHOTS;
let w: {
  river: { id: string; name: string };
  quarry: { id: string; name: string };
  sensor: { id: string; label: string };
  other: { id: string; label: string };
  viewerEmail: string;
  newcomerEmail: string;
  site: { id: string };
  lone: { id: string };
};

async function shoot(page: Page, name: string, selector?: string) {
  if (!shots) return;
  mkdirSync(shots, { recursive: true });
  if (selector) await page.locator(selector).screenshot({ path: join(shots, `${name}.png`) });
  else await page.screenshot({ path: join(shots, `${name}.png`), fullPage: true });
}

beforeAll(async () => {
  browser = await launchBrowser();
  useServerEnv();
  const fx = await import("../support/registry-fixtures");
  const { buildSessionBody, buildShotBody, buildSyncBody } = await import("~/seed/builders");
  const { ingestSync } = await import("~/models/sync.server");
  // Invented, in the manner of the demo: two clients of Fernhollow Geomatics sharing a tripod scanner.
  const sensor = await fx.makeSensor({ label: `Tripod scanner ${stamp}`, appliesAirCorrection: true, toleranceMm: 3, tolerancePpm: 10 });
  const other = await fx.makeSensor({ label: `Roof scanner ${stamp}`, appliesAirCorrection: true });
  const lone = await fx.makeSensor({ label: `Spare scanner ${stamp}`, appliesAirCorrection: true });
  const site = await fx.makeSite({ name: `Fernhollow yard ${stamp}`, targets: [{ label: "Grey board", reflectancePct: 45, referenceM: 25 }] });
  const river = await fx.makeProject({ name: `Valley road ${stamp}`, sensorIds: [sensor.id], siteIds: [site.id] });
  const quarry = await fx.makeProject({ name: `Quarry stockpiles ${stamp}`, sensorIds: [sensor.id, other.id], siteIds: [site.id] });
  const viewer = await fx.makeUser("viewer", `viewer-${stamp}@eastbank-roads.example`);
  await fx.makeUser("crew", `newcomer-${stamp}@fernhollow.example`);
  await fx.addMembers(river.id, [viewer.email]);
  // Three check-shots on the river project: enough to show a verdict row with its figures.
  const admin = await fx.makeUser("admin");
  const session = { ...buildSessionBody({ sensorId: sensor.id, siteId: site.id }), projectId: river.id };
  const body = buildSyncBody({
    sessions: [session],
    shots: [25.002, 25.004, 25.001].map((r, i) => buildShotBody({ sessionId: session.id, takenAt: `2026-05-04T08:1${i}:00+02:00`, readings: { rangesM: [r] } })),
  });
  const out = await ingestSync({ id: admin.id, role: "admin" }, body);
  expect(out.status).toBe(200);
  w = {
    river: { id: river.id, name: river.name },
    quarry: { id: quarry.id, name: quarry.name },
    sensor: { id: sensor.id, label: sensor.label },
    other: { id: other.id, label: other.label },
    viewerEmail: viewer.email,
    newcomerEmail: `newcomer-${stamp}@fernhollow.example`,
    site: { id: site.id },
    lone: { id: lone.id },
  };
});
afterAll(async () => {
  await browser?.close();
});

test("an admin adds a person to a project by e-mail (a wrong address is refused, what was typed stays), then removes them after confirming", async () => {
  const context = await newContext(browser, { viewport: { width: 1100, height: 900 } });
  await signInAs(context, "admin@e2e.test");
  const page = await context.newPage();
  await page.goto(`/admin/projects/${w.quarry.id}`);
  const section = page.locator("#members");
  await section.getByRole("heading", { name: "Members (0)" }).waitFor();
  expect(await section.getByTestId("no-members").textContent()).toContain("No members yet");

  const box = section.getByLabel("E-mail address").first();
  await box.fill(`nobody-${stamp}@fernhollow.example`);
  await section.getByRole("button", { name: "Add member" }).click();
  await section.getByText(`No user has the address nobody-${stamp}@fernhollow.example`).waitFor();
  expect(await box.inputValue()).toBe(`nobody-${stamp}@fernhollow.example`);
  expect(await box.getAttribute("aria-invalid")).toBe("true");

  await box.fill(w.newcomerEmail);
  await section.getByRole("button", { name: "Add member" }).click();
  await page.getByText(`${w.newcomerEmail} is now a member.`).waitFor();
  await section.getByRole("heading", { name: "Members (1)" }).waitFor();
  const rows = await section.getByTestId("members").getByRole("row").allTextContents();
  expect(rows.join(" ")).toContain(w.newcomerEmail);
  // The change is in the project's history.
  expect(await page.getByRole("heading", { name: "History" }).locator("..").textContent()).toContain("member.add");
  expect(await seriousA11yViolations(page)).toEqual([]);
  // After a success the add form starts empty again.
  expect(await section.getByLabel("E-mail address").first().inputValue()).toBe("");
  expect(await page.getByRole("heading", { name: "History" }).locator("..").textContent()).toContain(w.newcomerEmail);
  await shoot(page, "project-members", "#members");

  // The person's own page lists the project, with a way to add them to another one.
  await section.getByTestId("members").getByRole("link").first().click();
  await page.locator("#projects").getByRole("heading", { name: "Projects (1)" }).waitFor();
  expect(await page.getByTestId("user-projects").textContent()).toContain(w.quarry.name);
  const options = await page
    .getByRole("combobox", { name: /to a project$/ })
    .locator("option")
    .allTextContents();
  expect(options.some((o) => o.startsWith(w.river.name))).toBe(true);
  expect(options.some((o) => o.startsWith(w.quarry.name))).toBe(false);
  await shoot(page, "user-projects", "#projects");
  await page.goBack();
  await section.getByRole("heading", { name: "Members (1)" }).waitFor();

  // Removing takes a second, explicit step.
  await section.getByText("Remove…").click();
  await section.getByRole("button", { name: /^Yes, remove/ }).click();
  await page.getByText("Removed from the project: they no longer see its records.").waitFor();
  await section.getByRole("heading", { name: "Members (0)" }).waitFor();
  await context.close();
});

test("a client's viewer lands on their own project's sensor verdicts, sees nothing of the other client's project, and a 403 page offers no tablet work", async () => {
  const context = await newContext(browser, { viewport: { width: 1100, height: 800 } });
  await signInAs(context, w.viewerEmail);
  const page = await context.newPage();
  await page.goto("/");
  const projects = page.getByTestId("home-project");
  await projects.first().waitFor();
  expect(await projects.count()).toBe(1);
  const text = (await page.locator("main").textContent()) ?? "";
  expect(text).toContain(w.river.name);
  expect(text).not.toContain(w.quarry.name);
  expect(text).not.toContain(w.other.label);
  // No work-area cards for a reader: the field and admin screens are not offered.
  expect(await page.locator("main").getByRole("link", { name: "Field" }).count()).toBe(0);
  const row = projects.getByRole("row").filter({ hasText: w.sensor.label });
  expect(await row.locator("[data-verdict]").getAttribute("data-verdict")).toBe("insufficient");
  expect(await row.locator("td").nth(2).textContent()).toBe("3");
  expect(await seriousA11yViolations(page)).toEqual([]);
  await shoot(page, "viewer-home");

  // The sensor link opens its report with the project's rule.
  await row.getByRole("link", { name: w.sensor.label }).click();
  await page.waitForURL((u) => u.pathname === `/review/sensors/${w.sensor.id}` && u.searchParams.get("project") === w.river.id);

  const field = await page.goto("/field");
  expect(field?.status()).toBe(403);
  await page.getByRole("heading", { name: "Not allowed" }).waitFor();
  const body = (await page.locator("body").textContent()) ?? "";
  expect(body).not.toMatch(/outbox|queued|tablet/i);
  expect(await page.getByRole("link", { name: "Go to your start page" }).count()).toBe(1);
  await shoot(page, "viewer-403-field");
  await context.close();
});

test("the tablet asks which project when sensor and site share two, implies the only one, and cannot start with none", async () => {
  // As an admin: their tablet copy holds every project, whatever the crews' memberships.
  const context = await newContext(browser, { viewport: { width: 1280, height: 800 } });
  await signInAs(context, "admin@e2e.test");
  const page = await context.newPage();
  await page.goto("/field");
  await page.getByRole("heading", { name: "Start session" }).waitFor();
  await page.waitForFunction((id) => [...document.querySelectorAll("option")].some((o) => (o as HTMLOptionElement).value === id), w.lone.id);
  const start = page.getByRole("button", { name: "Start session" });

  // No project holds this sensor: the form says so and cannot start.
  await page.getByLabel("Sensor", { exact: true }).selectOption(w.lone.id);
  await page.getByLabel("Site", { exact: true }).selectOption(w.site.id);
  await page.getByTestId("no-shared-project").waitFor();
  expect(await start.isDisabled()).toBe(true);

  // One shared project (the quarry holds the roof scanner): implied and shown, no choice asked.
  await page.getByLabel("Sensor", { exact: true }).selectOption(w.other.id);
  expect(await page.getByTestId("implied-project").textContent()).toContain(w.quarry.name);
  expect(await start.isDisabled()).toBe(false);

  // Two shared projects: a required choice.
  await page.getByLabel("Sensor", { exact: true }).selectOption(w.sensor.id);
  const project = page.getByLabel("Project", { exact: true });
  const options = await project.locator("option").allTextContents();
  expect(options.filter((o) => o.startsWith(w.river.name) || o.startsWith(w.quarry.name))).toHaveLength(2);
  await start.click();
  await page.getByText("Choose the project this session belongs to").waitFor();
  expect(page.url()).toMatch(/\/field$/);
  await project.selectOption(w.river.id);
  await start.click();
  await page.waitForURL(/\/field\/session\/[0-9a-f-]{36}$/);
  const sessionId = page.url().split("/").pop()!;
  const record = await page.evaluate(async (id) => {
    const db = (window.shotbookField as { db: { sessions: { get(id: string): Promise<{ record: { projectId?: string } }> } } }).db;
    return (await db.sessions.get(id))!.record;
  }, sessionId);
  expect(record.projectId).toBe(w.river.id);
  await shoot(page, "tablet-project");
  await context.close();
});
