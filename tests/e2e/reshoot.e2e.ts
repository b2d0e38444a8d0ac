// A QA re-shoot request reaching the crew's tablet (issue 12), in real Chromium with the network
// cut for real (tests/support/net-proxy.ts): QA sends it from the sensor page (a missing "why"
// is refused and what was typed stays), the tablet copies its reference data, the network goes,
// and the request shows for that sensor and site on the session screen and the coverage
// checklist; once QA marks it done, the next copy drops it.
import { afterAll, beforeAll, beforeEach, expect, test } from "vitest";
import type { Browser, BrowserContext, Page } from "playwright-core";
import { launchBrowser, newContext, signInAs, useServerEnv } from "./helpers";
import { fieldWorld, type FieldWorld } from "./field-fixtures";
import { startNetProxy, type NetProxy } from "../support/net-proxy";

let browser: Browser;
let world: FieldWorld;
let net: NetProxy;
let projectName: string;

beforeAll(async () => {
  net = await startNetProxy();
  browser = await launchBrowser({ proxy: net });
  world = await fieldWorld("Reshoot");
  useServerEnv();
  // Projects scope records (api.md v1.1): the request is seen by members of a project holding
  // the sensor and the site — the field world's project, whose members are the e2e crew and QA.
  projectName = world.project.name;
});
beforeEach(() => {
  net.setOnline(true);
});
afterAll(async () => {
  await browser?.close();
  await net?.close();
});

async function openReady(context: BrowserContext): Promise<Page> {
  const page = await context.newPage();
  page.on("pageerror", (e) => console.warn("pageerror:", e.message));
  await page.goto("/field");
  await page.locator('[data-testid="offline-ready"][data-ready="true"]').waitFor({ timeout: 30_000 });
  return page;
}

const WANTED = "dark board at 12.5 m, 5 shots in bright sun";
const WHY = "the bias on dark targets is near the limit";

test("QA asks for a re-shoot; the tablet copies it, goes offline for real, and shows it for that sensor and site", async () => {
  const qa = await newContext(browser);
  await signInAs(qa, "qa@e2e.test");
  const review = await qa.newPage();
  await review.goto(`/review/sensors/${world.sensor.id}`);
  const panel = review.getByTestId("reshoots");
  await panel.getByRole("heading", { name: "Ask the crew to shoot again" }).waitFor();
  await panel.getByLabel("Site").selectOption(world.site.id);
  await panel.getByLabel("Project (optional)").selectOption({ label: projectName });
  await panel.getByLabel(/^What to shoot/).fill(WANTED);
  // No reason: refused on its field, and what was typed stays.
  await panel.getByRole("button", { name: "Send the request to the crew" }).click();
  await panel.getByText(/Say why the shots are needed/).waitFor();
  expect(await panel.getByLabel(/^What to shoot/).inputValue()).toBe(WANTED);
  expect(await panel.getByLabel("Site").inputValue()).toBe(world.site.id);
  await panel.getByLabel("Why").fill(WHY);
  await panel.getByRole("button", { name: "Send the request to the crew" }).click();
  await review.getByTestId("reshoot-sent").waitFor();
  const open = panel.locator('[data-testid="reshoot-list"] li[data-state="open"]');
  await open.waitFor();
  expect(await open.textContent()).toContain(WANTED);
  expect(await open.textContent()).toContain("Asked by Test QA");
  const shots = process.env.FIELD_SHOTS_DIR;
  if (shots) await panel.screenshot({ path: `${shots}/reshoot-review.png` });

  // The crew's tablet copies its reference data online, then the network is cut for real.
  const tablet = await newContext(browser, { viewport: { width: 1280, height: 800 } });
  await signInAs(tablet, "crew@e2e.test");
  const page = await openReady(tablet);
  net.setOnline(false);
  expect(
    await page.evaluate(() =>
      fetch("/healthz").then(
        () => "reached",
        () => "cut",
      ),
    ),
  ).toBe("cut");

  // Another site with the same sensor: no request shows there.
  await page.getByLabel("Sensor", { exact: true }).selectOption(world.sensor.id);
  await page.getByLabel("Site", { exact: true }).selectOption(world.other.id);
  await page.getByRole("button", { name: "Start session" }).click();
  await page.waitForURL(/\/field\/session\/[0-9a-f-]{36}$/);
  await page.getByRole("heading", { name: /^Shots in this session/ }).waitFor();
  expect(await page.getByTestId("reshoot-notice").count()).toBe(0);

  await page.goto("/field");
  await page.getByLabel("Sensor", { exact: true }).selectOption(world.sensor.id);
  await page.getByLabel("Site", { exact: true }).selectOption(world.site.id);
  await page.getByRole("button", { name: "Start session" }).click();
  await page.waitForURL(/\/field\/session\/[0-9a-f-]{36}$/);
  const id = page.url().split("/").pop()!;
  const notice = page.getByTestId("reshoot-notice");
  await notice.waitFor();
  const said = (await notice.getByTestId("reshoot-item").textContent())!.replace(/\s+/g, " ");
  expect(said).toContain(`QA asks: ${WANTED}, because ${WHY}, from Test QA,`);
  expect(said).toMatch(/\d{4}-\d{2}-\d{2} \d{2}:\d{2} UTC[+−]\d{2}:\d{2}/);
  expect(said).toContain(projectName);
  if (shots) await page.screenshot({ path: `${shots}/reshoot-session-1280x800.png` });

  await page.getByRole("link", { name: "Coverage checklist" }).click();
  await page.waitForURL(new RegExp(`/field/session/${id}/coverage$`));
  await page.getByRole("heading", { name: "Coverage checklist" }).waitFor();
  expect((await page.getByTestId("reshoot-notice").textContent())!.replace(/\s+/g, " ")).toContain(`QA asks: ${WANTED}`);

  // QA marks it done; once the tablet is back online and copies again, the request is gone.
  // (QA's browser shares the proxy: the network comes back first.)
  net.setOnline(true);
  await panel.getByRole("button", { name: /Mark done/ }).click();
  await panel.locator('[data-testid="reshoot-list"] li[data-state="done"]').waitFor();
  await page.evaluate(() => (window.shotbookField as { refreshReference(): Promise<unknown> }).refreshReference?.());
  await page.reload();
  await page.getByRole("heading", { name: "Coverage checklist" }).waitFor();
  await expect.poll(() => page.getByTestId("reshoot-notice").count(), { timeout: 15_000 }).toBe(0);
  await tablet.close();
  await qa.close();
}, 120_000);
