// Issue 11: redirect targets from user input (sign-in, magic link, theme switch) stay on this
// site. Browsers treat "\" as "/" and drop tabs/newlines, so "/\evil.example" and
// "/<tab>/evil.example" lead off-site (WHATWG URL Standard, "special" schemes and
// "remove all ASCII tab or newline"); each payload must fall back to "/".
import { beforeAll, expect, test } from "vitest";
import { getDb } from "~/db/client.server";
import { users } from "~/db/schema";
import { resetEnvCache } from "~/env.server";
import * as login from "~/routes/login";
import * as theme from "~/routes/theme";
import { safeRedirect } from "~/utils/http";
import { answerOf, args, formRequest, getRequest } from "./auth-helpers";

const OFF_SITE = [
  "/\\evil.example",
  "/\\/evil.example",
  "/\t/evil.example",
  "/\n/evil.example",
  "/\r\n/evil.example",
  "/\u0000/evil.example",
  "//evil.example",
  "///evil.example",
  "/%2F/evil.example",
  "/%5Cevil.example",
  "/%09/evil.example",
  "https://evil.example/",
  "http:evil.example",
  "javascript:alert(1)",
  "\\\\evil.example",
  " //evil.example",
  "evil.example",
  "",
];

const ON_SITE = ["/", "/review", "/review/sensors/abc?tab=map#chart", "/login?redirectTo=%2Freview"];

beforeAll(async () => {
  resetEnvCache();
  // With no users at all the first address becomes admin (and gets mail); not this test's case.
  await getDb().insert(users).values({ email: "quinn.qa@fernhollow.test", role: "qa" });
});

/** Where a browser would go from a Location header given on http://localhost. */
const landing = (location: string) => new URL(location, "http://localhost/");

test("safeRedirect keeps this site's paths and refuses every off-site payload", () => {
  for (const to of ON_SITE) expect(safeRedirect(to), to).toBe(to);
  for (const to of OFF_SITE) expect(safeRedirect(to), JSON.stringify(to)).toBe("/");
  expect(safeRedirect("//evil.example", "/field")).toBe("/field");
});

test("the theme switch redirects only within the site", async () => {
  for (const to of OFF_SITE) {
    const a = await answerOf(() => theme.action(args(formRequest("/theme", { theme: "dark", redirectTo: to }))));
    expect(a.status, JSON.stringify(to)).toBe(302);
    expect(a.location, JSON.stringify(to)).toBe("/");
    expect(landing(a.location!).origin).toBe("http://localhost");
  }
  const ok = await answerOf(() => theme.action(args(formRequest("/theme", { theme: "dark", redirectTo: "/review" }))));
  expect(ok.location).toBe("/review");
});

test("the sign-in page carries only on-site targets onward", async () => {
  for (const to of OFF_SITE) {
    const page = await answerOf(() => login.loader(args(getRequest(`/login?redirectTo=${encodeURIComponent(to)}`))));
    expect((page.body as { redirectTo: string }).redirectTo, JSON.stringify(to)).toBe("/");
  }
  const a = await answerOf(() => login.action(args(formRequest("/login", { email: "nobody@elsewhere.test", redirectTo: "/\\evil.example" }, { ip: "192.0.2.9" }))));
  expect(a.status).toBe(302);
  expect(a.location).toBe("/login/code");
});
