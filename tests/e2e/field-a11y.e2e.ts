// The field screens (start session, the shot form with its errors, the outbox) checked for serious
// accessibility violations in real Chromium.
import { expect, test } from "vitest";
import { newContext, seriousA11yViolations, signInAs } from "./helpers";
import { fieldSuite, openFieldOnline } from "../support/field-online";

const suite = fieldSuite("A11y");

test("the field screens have no serious accessibility violations", async () => {
  const context = await newContext(suite.browser, { viewport: { width: 1024, height: 1366 } });
  await signInAs(context, "crew@e2e.test");
  const page = await openFieldOnline(context);
  expect(await seriousA11yViolations(page)).toEqual([]);
  await page.getByLabel("Sensor", { exact: true }).selectOption(suite.world.sensor.id);
  await page.getByLabel("Site", { exact: true }).selectOption(suite.world.site.id);
  await page.getByRole("button", { name: "Start session" }).click();
  await page.getByRole("button", { name: "Save shot" }).click();
  await page.getByText("Enter the reflectance (%)").waitFor();
  expect(await seriousA11yViolations(page)).toEqual([]);
  await page.getByRole("link", { name: "Outbox", exact: true }).click();
  await page.getByTestId("outbox-summary").waitFor();
  expect(await seriousA11yViolations(page)).toEqual([]);
  await context.close();
});
