// A new version of the field PWA in real Chromium: the waiting worker holds back while a form has
// typed input, then offers to reload.
import { readFileSync, writeFileSync } from "node:fs";
import { resolve } from "node:path";
import { expect, test } from "vitest";
import { newContext, signInAs } from "./helpers";
import { fieldSuite, openFieldOnline } from "../support/field-online";

const suite = fieldSuite("Update");

test("a new version waits while a form holds typed input, then offers to reload", async () => {
  const context = await newContext(suite.browser);
  await signInAs(context, "crew@e2e.test");
  const page = await openFieldOnline(context);
  await page.getByLabel("Note").fill("Half typed");
  // A deploy: the server now has another worker script (the built file with one more line).
  const swFile = resolve(process.env.RR_BUILD_DIR ?? "build", "client/sw.js");
  const original = readFileSync(swFile, "utf8");
  try {
    writeFileSync(swFile, `${original}\n// next version\n`);
    await page.evaluate(async () => {
      await (await navigator.serviceWorker.getRegistration())!.update();
    });
    await page.waitForFunction(async () => Boolean((await navigator.serviceWorker.getRegistration())?.waiting), undefined, { timeout: 30_000 });
    await page.waitForTimeout(1500);
    expect(await page.evaluate(() => document.querySelectorAll('form[data-dirty="true"]').length)).toBe(1);
    expect(await page.getByTestId("update-prompt").count()).toBe(0);
    // Still waiting: nothing replaced the running version under the crew's hands.
    expect(await page.evaluate(async () => Boolean((await navigator.serviceWorker.getRegistration())?.waiting))).toBe(true);
    await page.getByLabel("Note").fill("");
    await page.getByTestId("update-prompt").waitFor({ timeout: 10_000 });
    expect(await page.getByTestId("update-prompt").textContent()).toContain("A new version is ready — reload");
    await Promise.all([page.waitForEvent("load"), page.getByRole("button", { name: "Reload" }).click()]);
    expect(await page.evaluate(async () => (await navigator.serviceWorker.getRegistration())?.waiting ?? null)).toBeNull();
    await page.getByRole("heading", { name: "Start session" }).waitFor();
  } finally {
    writeFileSync(swFile, original);
    await context.close();
  }
});
