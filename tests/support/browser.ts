// Chromium for the browser tests and the field bench (no vitest import, so the bench can use
// it too). With `proxy` (net-proxy.ts) every request — the page's and the service worker's —
// goes through it, so switching it off cuts the network for real (context.setOffline does not
// reach the worker).
import { chromium, type Browser } from "playwright-core";
import { CHROMIUM_PATH } from "../e2e/chromium";
import type { NetProxy } from "./net-proxy";

export const CHROMIUM_ARGS = ["--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run", "--disable-background-networking", "--disable-component-update", "--disable-sync"];

export async function launchBrowser(opts: { proxy?: NetProxy } = {}): Promise<Browser> {
  return chromium.launch({
    executablePath: CHROMIUM_PATH,
    headless: true,
    args: [...CHROMIUM_ARGS, ...(opts.proxy?.chromiumArgs ?? [])],
  });
}
