// Browser-test helpers: Debian's Chromium through playwright-core, sessions minted in the
// shared database (sign-in itself is tested through the real mail round trip elsewhere).
import { readFileSync } from "node:fs";
import { createRequire } from "node:module";
import { chromium, type Browser, type BrowserContext, type Page } from "playwright-core";
import { inject } from "vitest";
import type { NetProxy } from "../support/net-proxy";
import { CHROMIUM_ARGS } from "../support/browser";
import { CHROMIUM_PATH } from "./chromium";

export const baseURL = () => inject("baseURL");

/** Point this test process at the e2e server's database and secret before app code loads. */
export function useServerEnv() {
  process.env.DATABASE_URL = inject("databaseUrl");
  process.env.DATA_DIR = inject("dataDir");
  process.env.MAIL_DIR = inject("mailDir");
  process.env.SESSION_SECRET = inject("sessionSecret");
  process.env.COOKIE_SECURE = "false";
  process.env.NODE_ENV = "production";
}

// Chromium's flags and launchBrowser({ proxy }) live in tests/support/browser.ts (the field bench uses them too).
export { launchBrowser } from "../support/browser";

/**
 * A browser with a profile on disk, as a tablet has: close it and launch again with the same
 * `userDataDir`, and the service worker, its caches, IndexedDB and cookies are still there.
 */
export async function launchTablet(userDataDir: string, proxy: NetProxy, viewport = { width: 1280, height: 800 }): Promise<BrowserContext> {
  return chromium.launchPersistentContext(userDataDir, {
    executablePath: CHROMIUM_PATH,
    headless: true,
    args: [...CHROMIUM_ARGS, ...proxy.chromiumArgs],
    baseURL: baseURL(),
    viewport,
  });
}

export async function newContext(browser: Browser, opts: { viewport?: { width: number; height: number } } = {}) {
  return browser.newContext({ baseURL: baseURL(), viewport: opts.viewport ?? { width: 1280, height: 900 } });
}

/** Signs a context in as the user with this e-mail by creating a real server-side session. */
export async function signInAs(context: BrowserContext, email: string) {
  useServerEnv();
  const { getDb } = await import("~/db/client.server");
  const { users } = await import("~/db/schema");
  const { createAuthSession } = await import("~/auth/session.server");
  const { eq } = await import("drizzle-orm");
  const [user] = await getDb().select().from(users).where(eq(users.email, email));
  if (!user) throw new Error(`No test user ${email}`);
  const { cookie } = await createAuthSession(user);
  const [pair, ...attrs] = cookie.split(";");
  const [name, ...rest] = pair!.split("=");
  const url = new URL(baseURL());
  // Keep the server's lifetime, so the sign-in survives a browser restart as it does for a user.
  const maxAge = attrs.map((a) => a.trim().match(/^Max-Age=(\d+)$/i)?.[1]).find(Boolean);
  const expires = maxAge ? Math.floor(Date.now() / 1000) + Number(maxAge) : undefined;
  await context.addCookies([{ name: name!, value: rest.join("="), domain: url.hostname, path: "/", httpOnly: true, sameSite: "Lax", ...(expires ? { expires } : {}) }]);
  return user;
}

const require = createRequire(import.meta.url);
const AXE_SOURCE = readFileSync(require.resolve("axe-core/axe.min.js"), "utf8");

/** Runs axe-core on the page; returns the serious and critical violations. */
export async function seriousA11yViolations(page: Page) {
  // Evaluated through the devtools protocol: a <script> tag of ours would be (rightly) refused
  // by the page's Content-Security-Policy, which allows only scripts with the server's nonce.
  await page.evaluate(AXE_SOURCE);
  const result = await page.evaluate(async () => {
    // @ts-expect-error axe is injected above
    const r = await window.axe.run(document, { resultTypes: ["violations"] });
    return r.violations.map((v: { id: string; impact: string; help: string; nodes: { target: string[] }[] }) => ({
      id: v.id,
      impact: v.impact,
      help: v.help,
      targets: v.nodes.slice(0, 5).map((n) => n.target.join(" ")),
    }));
  });
  return (result as { id: string; impact: string; help: string; targets: string[] }[]).filter((v) => v.impact === "serious" || v.impact === "critical");
}
