// Sign-in in Chromium against the built server, with the code read from the mail fake's
// MAIL_DIR; each role then sees only its own work areas.
import { readdirSync, readFileSync } from "node:fs";
import { join } from "node:path";
import { afterAll, beforeAll, expect, inject, test } from "vitest";
import type { Browser, Page } from "playwright-core";
import { parseEml } from "~/mail/eml.server";
import { launchBrowser, newContext, seriousA11yViolations } from "./helpers";
import { TEST_USERS } from "./users";

let browser: Browser;
beforeAll(async () => {
  browser = await launchBrowser();
});
afterAll(async () => {
  await browser?.close();
});

function codesTo(address: string) {
  const dir = inject("mailDir");
  let names: string[] = [];
  try {
    names = readdirSync(dir)
      .filter((n) => n.endsWith(".eml"))
      .sort();
  } catch {}
  return names.map((n) => parseEml(readFileSync(join(dir, n), "utf8"), n)).filter((m) => m.to === address && m.code);
}

async function waitForNewCode(address: string, before: number) {
  const deadline = Date.now() + 10_000;
  for (;;) {
    const mails = codesTo(address);
    if (mails.length > before) return mails.at(-1)!.code!;
    if (Date.now() > deadline) throw new Error(`No sign-in mail reached ${address}`);
    await new Promise((r) => setTimeout(r, 100));
  }
}

async function askForCode(page: Page, email: string, path = "/login") {
  const before = codesTo(email).length;
  await page.goto(path);
  await page.getByLabel("E-mail address").fill(email);
  await page.getByRole("button", { name: "E-mail me a code" }).click();
  await page.waitForURL(/\/login\/code/);
  // The URL changes as the navigation starts; wait for the code page itself.
  await page.getByRole("heading", { name: "Enter your code" }).waitFor();
  return waitForNewCode(email, before);
}

const AREAS: Record<string, string[]> = {
  admin: ["Field", "Review", "Admin"],
  qa: ["Field", "Review"],
  crew: ["Field", "Review"],
  viewer: ["Review"],
};

for (const u of TEST_USERS) {
  test(`${u.role}: signs in with the e-mailed code and sees only what the ${u.role} role may do`, async () => {
    const context = await newContext(browser, { viewport: { width: 1024, height: 768 } });
    const page = await context.newPage();
    const code = await askForCode(page, u.email);
    await page.getByText(u.email).first().waitFor();
    const input = page.getByLabel("Code from the e-mail (6 digits)");
    expect(await input.getAttribute("inputmode")).toBe("numeric");
    expect(await input.getAttribute("autocomplete")).toBe("one-time-code");
    await input.fill(code);
    await page.getByRole("button", { name: "Sign in" }).click();
    await page.waitForURL((url) => url.pathname === "/");
    await page.getByTestId("signed-in-user").waitFor();
    expect(await page.getByTestId("signed-in-user").textContent()).toContain(u.name);
    const nav = page.getByRole("navigation", { name: "Work areas" });
    const links = (await nav.getByRole("link").allTextContents()).map((t) => t.trim());
    expect(links).toEqual(AREAS[u.role]);

    const admin = await page.goto("/admin/users");
    if (u.role === "admin") {
      expect(admin?.status()).toBe(200);
      const rows = await page.getByRole("table").getByRole("row").allTextContents();
      for (const other of TEST_USERS) expect(rows.join(" ")).toContain(other.email);
    } else {
      expect(admin?.status()).toBe(403);
      expect(await page.locator("h1").textContent()).toBe("Not allowed");
    }
    const me = await page.request.get("/api/me");
    expect(me.status()).toBe(200);
    expect(await me.json()).toMatchObject({ email: u.email, role: u.role });

    await page.goto("/");
    await page.getByRole("button", { name: "Sign out" }).click();
    await page.waitForFunction(() => !document.querySelector("[data-testid=signed-in-user]"));
    expect((await page.request.get("/api/me")).status()).toBe(401);
    await context.close();
  });
}

test("a page asked for while signed out comes back after sign-in (redirectTo), and the sign-in pages pass axe", async () => {
  const context = await newContext(browser, { viewport: { width: 800, height: 1280 } });
  const page = await context.newPage();
  await page.goto("/admin/tokens");
  await page.waitForURL(/\/login\?redirectTo=%2Fadmin%2Ftokens/);
  expect(await seriousA11yViolations(page)).toEqual([]);
  const code = await askForCode(page, "admin@e2e.test", page.url());
  expect(await seriousA11yViolations(page)).toEqual([]);
  await page.getByLabel("Code from the e-mail (6 digits)").fill(code);
  await page.getByRole("button", { name: "Sign in" }).click();
  await page.waitForURL(/\/admin\/tokens$/);
  await page.getByRole("heading", { level: 1, name: "API tokens" }).waitFor();
  await context.close();
});

test("a wrong code says how many tries are left and keeps the address; the right one still works", async () => {
  const context = await newContext(browser);
  const page = await context.newPage();
  const code = await askForCode(page, "qa@e2e.test");
  const wrong = code === "000000" ? "111111" : "000000";
  await page.getByLabel("Code from the e-mail (6 digits)").fill(wrong);
  await page.getByRole("button", { name: "Sign in" }).click();
  await page.getByText("That code is not right. 4 tries left").waitFor();
  expect(await page.getByText("qa@e2e.test").first().isVisible()).toBe(true);
  expect(await page.getByLabel("Code from the e-mail (6 digits)").inputValue()).toBe(wrong);
  await page.getByLabel("Code from the e-mail (6 digits)").fill(code);
  await page.getByRole("button", { name: "Sign in" }).click();
  await page.waitForURL((url) => url.pathname === "/");
  await page.getByTestId("signed-in-user").waitFor();
  expect(await page.getByTestId("signed-in-user").textContent()).toContain("Test QA");
  await context.close();
});

test("an unknown address sees the same code page, and /dev/mail shows the codes that were sent", async () => {
  const context = await newContext(browser);
  const page = await context.newPage();
  await page.goto("/login");
  await page.getByLabel("E-mail address").fill("stranger@e2e.test");
  await page.getByRole("button", { name: "E-mail me a code" }).click();
  await page.waitForURL(/\/login\/code/);
  await page.getByRole("heading", { level: 1, name: "Enter your code" }).waitFor();
  await page.getByText("stranger@e2e.test").first().waitFor();
  await page.goto("/dev/mail");
  const first = page.getByTestId("dev-mail").first();
  expect(await first.getByTestId("dev-mail-code").textContent()).toMatch(/^\d{6}$/);
  expect(await page.getByText("stranger@e2e.test").count()).toBe(0);
  await context.close();
});
