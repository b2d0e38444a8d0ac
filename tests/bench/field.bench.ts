// Bench of the field tablet, in Chromium against a built server this script starts itself:
// 1. Time to save a shot to the outbox (validation with the sync schema, the instant check of
//    the ranging core, the IndexedDB transaction): 200 saves through the app's own saveShot
//    and 40 through the form (click "Save shot" → "Saved"), with the CPU throttled 4× (CDP
//    Emulation.setCPUThrottlingRate) and the network cut for real (tests/support/net-proxy.ts:
//    the page and its service worker both lose it). Target: p95 < 50 ms.
// 2. Gzip size of the JavaScript a field screen loads (build manifest: entry, root, shell,
//    field layout and log-shot route with their imports). Target ≤ 200 KB; no maplibre.
// Run alone: npx tsx tests/bench/field.bench.ts (uses RR_BUILD_DIR or build/; builds if missing).
import { spawn, spawnSync, type ChildProcess } from "node:child_process";
import { randomBytes } from "node:crypto";
import { existsSync, mkdtempSync, readdirSync, readFileSync, rmSync } from "node:fs";
import { loadavg, tmpdir } from "node:os";
import { join, resolve } from "node:path";
import { pathToFileURL } from "node:url";
import { gzipSync } from "node:zlib";
import { freePort } from "../support/ports";
import { target } from "./targets.ts";

const SAVES = 200;
const FORM_SAVES = 40;
const THROTTLE = 4;
/** Saves come seconds apart in the field; a short pause lets the screen's live lists settle, as they would. */
const PAUSE_MS = 100;
const ROOT = resolve(import.meta.dirname, "../..");

const fmt = (n: number, d = 1) => n.toLocaleString("en-GB", { maximumFractionDigits: d, minimumFractionDigits: d });

function quantile(sorted: number[], p: number) {
  // type 7 (linear between order statistics), as R's default
  const h = (sorted.length - 1) * p;
  const lo = Math.floor(h);
  return sorted[lo]! + (h - lo) * ((sorted[Math.min(lo + 1, sorted.length - 1)] ?? sorted[lo]!) - sorted[lo]!);
}

type Manifest = { entry: { module: string; imports?: string[] }; routes: Record<string, { module: string; imports?: string[]; css?: string[] }> };

export function fieldBundle(buildDir: string) {
  const assets = join(buildDir, "client/assets");
  const file = readdirSync(assets).find((f) => /^manifest-[\w-]+\.js$/.test(f));
  if (!file) throw new Error(`no React Router manifest in ${assets}`);
  const text = readFileSync(join(assets, file), "utf8");
  const manifest = JSON.parse(text.slice(text.indexOf("{"), text.lastIndexOf("}") + 1)) as Manifest;
  const chain = ["root", "routes/shell", "routes/field", "routes/field.session"];
  const files = new Set<string>([manifest.entry.module, ...(manifest.entry.imports ?? [])]);
  for (const id of chain) {
    const r = manifest.routes[id];
    if (!r) throw new Error(`route ${id} not in the build manifest`);
    files.add(r.module);
    for (const i of r.imports ?? []) files.add(i);
  }
  let gz = 0;
  let raw = 0;
  for (const f of files) {
    const buf = readFileSync(join(buildDir, "client", f));
    raw += buf.length;
    gz += gzipSync(buf, { level: 9 }).length;
  }
  const maplibre = [...files].filter((f) => /maplibre/i.test(f) || /maplibre-gl/.test(readFileSync(join(buildDir, "client", f), "utf8").slice(0, 4000)));
  return { files: files.size, raw, gz, maplibre };
}

export async function run(): Promise<string[]> {
  const buildDir = resolve(ROOT, process.env.RR_BUILD_DIR ?? "build");
  if (!existsSync(join(buildDir, "server/index.js")) || !existsSync(join(buildDir, "client/sw.js"))) {
    const b = spawnSync("npx", ["react-router", "build"], { cwd: ROOT, stdio: "inherit", env: process.env });
    if (b.status !== 0) throw new Error("the build failed");
  }
  const lines: string[] = [
    `  (machine load average ${loadavg()
      .map((x) => x.toFixed(1))
      .join(" / ")}: timings are noisy on a busy machine)`,
  ];
  const bundle = fieldBundle(buildDir);
  lines.push(
    target("JS of a field screen (log shot) ≤ 200 KB gzip", `${fmt(bundle.gz / 1024)} KB gzip (${bundle.files} files, ${fmt(bundle.raw / 1024)} KB raw)`, bundle.gz / 1024 <= 200),
    `  maplibre in it: ${bundle.maplibre.length ? bundle.maplibre.join(", ") : "no"}`,
  );

  const dir = mkdtempSync(join(tmpdir(), "shotbook-field-bench-"));
  Object.assign(process.env, {
    DATABASE_URL: `file:${join(dir, "bench.db")}`,
    DATA_DIR: dir,
    MAIL_DIR: join(dir, "mail"),
    SESSION_SECRET: randomBytes(48).toString("base64"),
    COOKIE_SECURE: "false",
    NODE_ENV: "production",
  });
  let server: ChildProcess | undefined;
  // Every request of the page AND its service worker goes through this proxy; switching it off
  // is a real network cut (Playwright's context.setOffline does not reach the service worker).
  const { startNetProxy } = await import("../support/net-proxy.ts");
  const { launchBrowser } = await import("../support/browser.ts");
  const proxy = await startNetProxy();
  const browser = await launchBrowser({ proxy });
  try {
    const { getDb } = await import(pathToFileURL(join(ROOT, "app/db/client.server.ts")).href);
    const { migrateDb } = await import(pathToFileURL(join(ROOT, "app/db/migrate.server.ts")).href);
    const db = getDb();
    await migrateDb(db);
    const fx = await import(pathToFileURL(join(ROOT, "tests/support/registry-fixtures.ts")).href);
    const { createAuthSession } = await import(pathToFileURL(join(ROOT, "app/auth/session.server.ts")).href);
    const crew = await fx.makeUser("crew");
    const sensor = await fx.makeSensor({ label: "Bench roof scanner" });
    const site = await fx.makeSite({
      targets: [
        { reflectancePct: 10, referenceM: 12.5 },
        { reflectancePct: 50, referenceM: 25 },
        { reflectancePct: 85, referenceM: 40 },
      ],
    });
    await fx.makeTape();
    await fx.shareProject([sensor], [site], [crew]); // issue 14
    const { cookie } = await createAuthSession({ id: crew.id, role: "crew" });

    const port = await freePort();
    server = spawn(process.execPath, ["--import", "tsx", "app/cli/serve.ts", join(buildDir, "server/index.js")], {
      cwd: ROOT,
      env: { ...process.env, PORT: String(port), HOST: "127.0.0.1", APP_URL: `http://127.0.0.1:${port}` },
      stdio: "ignore",
    });
    const base = `http://127.0.0.1:${port}`;
    // a loaded machine may take a while to start the server (tsx, the build, migrations checked)
    for (const deadline = Date.now() + 90_000; ;) {
      try {
        if ((await fetch(`${base}/healthz`)).ok) break;
      } catch {}
      if (Date.now() > deadline) throw new Error("the built server did not start");
      await new Promise((r) => setTimeout(r, 200));
    }

    const context = await browser.newContext({ baseURL: base, viewport: { width: 1024, height: 1366 } });
    const [pair] = cookie.split(";");
    const eq = pair!.indexOf("=");
    await context.addCookies([{ name: pair!.slice(0, eq), value: pair!.slice(eq + 1), domain: "127.0.0.1", path: "/", httpOnly: true, sameSite: "Lax" }]);
    const page = await context.newPage();
    await page.goto("/field");
    await page.waitForFunction(() => (document.querySelector('[data-testid="reference-copied-at"]')?.textContent ?? "…").match(/\d/));
    await page.evaluate(async () => {
      await navigator.serviceWorker.ready;
    });
    await page.waitForFunction(async () => {
      const name = (await caches.keys()).find((n) => n.startsWith("field-data-"));
      return name ? (await (await caches.open(name)).keys()).length >= 5 : false;
    });
    // Offline, as in the field: nothing leaves the tablet (page or service worker) while we time the saves.
    proxy.setOnline(false);
    const cdp = await context.newCDPSession(page);
    await cdp.send("Emulation.setCPUThrottlingRate", { rate: THROTTLE });

    const times = await page.evaluate(
      async ({ n, sensorId, siteId, targets, pauseMs }) => {
        type F = {
          startSession(r: object): Promise<{ id: string }>;
          saveShot(d: object, p: null, ctx?: object): Promise<unknown>;
          readReference(): Promise<{ sensors: { id: string }[]; sites: { id: string }[]; tapes: unknown[] }>;
        };
        const f = window.shotbookField as unknown as F;
        const s = await f.startSession({ sensorId, siteId, airTempC: 14, pressureHpa: 1002, humidityPct: 70 });
        const ref = await f.readReference();
        const ctx = { sensor: ref.sensors.find((x) => x.id === sensorId), site: ref.sites.find((x) => x.id === siteId), tapes: ref.tapes, project: undefined };
        const out: number[] = [];
        for (let i = 0; i < n; i++) {
          const t = targets[i % targets.length]!;
          const t0 = performance.now();
          await f.saveShot(
            {
              sessionId: s.id,
              targetId: t.id,
              reference: { method: "edm", distanceM: t.referenceM },
              readings: { rangesM: [t.referenceM + 0.002, t.referenceM + 0.003] },
              reflectancePct: t.reflectancePct,
              illuminanceKlux: 30,
            },
            null,
            ctx,
          );
          out.push(performance.now() - t0);
          if (pauseMs) await new Promise((r) => setTimeout(r, pauseMs));
        }
        // Where the time goes: the two checks alone, without IndexedDB.
        const fx = window.shotbookField as unknown as { checkShotRecord(r: object): unknown[]; previewShot(s: object, r: object, c: object): unknown };
        const session = { id: s.id, sensorId, siteId, startedAt: new Date().toISOString(), airTempC: 14, pressureHpa: 1002, humidityPct: 70 };
        const check: number[] = [];
        const preview: number[] = [];
        for (let i = 0; i < n; i++) {
          const t = targets[i % targets.length]!;
          const rec = {
            id: crypto.randomUUID(),
            sessionId: s.id,
            takenAt: new Date().toISOString(),
            targetId: t.id,
            reference: { method: "edm", distanceM: t.referenceM },
            readings: { rangesM: [t.referenceM + 0.002, t.referenceM + 0.003] },
            reflectancePct: t.reflectancePct,
            illuminanceKlux: 30,
          };
          let t0 = performance.now();
          fx.checkShotRecord(rec);
          check.push(performance.now() - t0);
          t0 = performance.now();
          fx.previewShot(session, rec, ctx);
          preview.push(performance.now() - t0);
        }
        return { out, check, preview, sessionId: s.id };
      },
      {
        n: SAVES,
        sensorId: sensor.id,
        siteId: site.id,
        targets: site.targets.map((t: { id: string; referenceM: number; reflectancePct: number }) => ({ id: t.id, referenceM: t.referenceM, reflectancePct: t.reflectancePct })),
        pauseMs: PAUSE_MS,
      },
    );
    const sorted = [...times.out].sort((a, b) => a - b);
    const p95 = quantile(sorted, 0.95);
    lines.push(
      target(
        `saving a shot p95 < 50 ms, CPU ${THROTTLE}× slower, network cut`,
        `p95 ${fmt(p95)} ms (median ${fmt(quantile(sorted, 0.5))}, max ${fmt(sorted[sorted.length - 1]!)}; saveShot, ${SAVES} saves ${PAUSE_MS} ms apart)`,
        p95 < 50,
      ),
    );

    const med = (xs: number[]) =>
      fmt(
        quantile(
          [...xs].sort((a, b) => a - b),
          0.5,
        ),
        2,
      );
    const p95of = (xs: number[]) =>
      fmt(
        quantile(
          [...xs].sort((a, b) => a - b),
          0.95,
        ),
        2,
      );
    lines.push(
      `    of which: validation (form schema + sync schema) median ${med(times.check)} ms, p95 ${p95of(times.check)} ms; instant check (ranging core) median ${med(times.preview)} ms, p95 ${p95of(times.preview)} ms; the rest is IndexedDB`,
    );

    // Through the form: pick a target (fills distance and reflectance), type a range, save.
    await page.goto(`/field/session/${times.sessionId}`);
    await page.getByRole("button", { name: "Save shot" }).waitFor();
    const formTimes: number[] = [];
    for (let i = 0; i < FORM_SAVES; i++) {
      const t = site.targets[i % site.targets.length]!;
      await page.getByRole("combobox", { name: /^Target/ }).selectOption(t.id);
      await page.getByLabel("EDM", { exact: true }).check();
      await page.getByLabel("Sensor range (m)").fill(String(t.referenceM + 0.004));
      await page.getByLabel("Illuminance (klux)").fill("30");
      const ms = await page.evaluate(
        () =>
          new Promise<number>((res) => {
            const status = document.querySelector('[data-testid="save-status"]')!;
            const obs = new MutationObserver(() => {
              if (status.textContent?.startsWith("Saved")) {
                obs.disconnect();
                res(performance.now() - t0);
              }
            });
            obs.observe(status, { childList: true, characterData: true, subtree: true });
            const t0 = performance.now();
            document.querySelector<HTMLButtonElement>('form[aria-label="Log shot"] button[type="submit"]')!.click();
          }),
      );
      formTimes.push(ms);
    }
    const fs = [...formTimes].sort((a, b) => a - b);
    lines.push(`  save through the form (click → "Saved", ${FORM_SAVES} saves, CPU ${THROTTLE}× slower): median ${fmt(quantile(fs, 0.5))} ms, p95 ${fmt(quantile(fs, 0.95))} ms`);
    await context.close();
    db.$client.close();
  } finally {
    await browser.close();
    await proxy.close();
    server?.kill("SIGTERM");
    rmSync(dir, { recursive: true, force: true });
  }
  return lines;
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? "").href) {
  for (const line of await run()) console.log(line);
}
