/// <reference lib="webworker" />
// Shotbook's service worker (built by vite-plugin-pwa, injectManifest). It precaches the
// client build (route modules, the React Router manifest, CSS, fonts, icons), answers the
// field screens' navigations from a page cache when the network is gone, answers React
// Router's route discovery (/__manifest) from the precached manifest, and drains the outbox
// through Background Sync where the browser has it.
import { cleanupOutdatedCaches, matchPrecache, precacheAndRoute } from "workbox-precaching";
import { registerRoute } from "workbox-routing";
import { syncOutbox } from "~/offline/sync";

declare const self: ServiceWorkerGlobalScope & { __WB_MANIFEST: (string | { url: string; revision: string | null })[] };
type SyncEvent = ExtendableEvent & { tag: string };

const PRECACHE = self.__WB_MANIFEST;
precacheAndRoute(PRECACHE);
cleanupOutdatedCaches();

const entryUrls = PRECACHE.map((e) => (typeof e === "string" ? e : e.url));
const RR_MANIFEST = entryUrls.find((u) => /(^|\/)assets\/manifest-[\w-]+\.js$/.test(u));
const VERSION = RR_MANIFEST?.match(/manifest-([\w-]+)\.js$/)?.[1] ?? "dev";
const PAGES = `field-pages-${VERSION}`;
const DATA = `field-data-${VERSION}`;

const UUID = /[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}/gi;
const SAMPLE_ID = "00000000-0000-4000-8000-000000000000";
/** One page per field screen; opened with any id, the same server HTML serves (the screen reads IndexedDB). */
const FIELD_PAGES = [
  "/field",
  "/field/outbox",
  `/field/session/${SAMPLE_ID}`,
  `/field/session/${SAMPLE_ID}/coverage`,
  `/field/session/${SAMPLE_ID}/shot/${SAMPLE_ID}`,
  `/field/session/${SAMPLE_ID}/fix`,
];

function pageKey(url: URL) {
  const path = url.pathname.replace(UUID, ":id").replace(/\/+$/, "") || "/";
  return new URL(path, self.location.origin).href;
}

function isHtml(res: Response) {
  return res.ok && !res.redirected && (res.headers.get("content-type") ?? "").includes("text/html");
}

async function fetchWithTimeout(request: Request | string, ms: number) {
  const ctrl = new AbortController();
  const t = setTimeout(() => ctrl.abort(), ms);
  try {
    return await fetch(request, { signal: ctrl.signal });
  } finally {
    clearTimeout(t);
  }
}

/** Copies every field screen's HTML and data answer while online and signed in (a redirect to sign-in is not kept). */
async function warmFieldPages() {
  const [pages, data] = await Promise.all([caches.open(PAGES), caches.open(DATA)]);
  await Promise.all(
    FIELD_PAGES.flatMap((path) => [
      (async () => {
        try {
          const res = await fetchWithTimeout(new Request(path, { credentials: "same-origin", headers: { Accept: "text/html" } }), 15_000);
          if (isHtml(res)) await pages.put(pageKey(new URL(path, self.location.origin)), res);
        } catch {}
      })(),
      (async () => {
        try {
          const url = new URL(`${path}.data`, self.location.origin);
          const res = await fetchWithTimeout(new Request(url, { credentials: "same-origin" }), 15_000);
          if (res.status === 200 && !res.redirected) await data.put(dataKey(url), res);
        } catch {}
      })(),
    ]),
  );
}

/** How many field screens (page and data answer) this worker holds a copy of. */
async function fieldCopyStatus() {
  const [pages, data] = await Promise.all([caches.open(PAGES), caches.open(DATA)]);
  let p = 0;
  let d = 0;
  for (const path of FIELD_PAGES) {
    const url = new URL(path, self.location.origin);
    if (await pages.match(pageKey(url))) p++;
    if (await data.match(dataKey(new URL(`${path}.data`, self.location.origin)))) d++;
  }
  return { pages: p, data: d, total: FIELD_PAGES.length };
}

function offlinePage() {
  const html = `<!doctype html><html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1"><title>Offline — Shotbook</title>
<style>body{font:18px/1.5 system-ui,sans-serif;max-width:40rem;margin:2rem auto;padding:0 1rem;color:#0b0b0c}a{display:inline-block;min-height:44px;padding:.6rem 1rem;background:#0b4fb3;color:#fff;font-weight:700;border-radius:6px;text-decoration:none}</style></head>
<body><h1>No connection</h1><p>This page needs the network. The field screens work offline once they have been opened on this tablet while online.</p><p><a href="/field">Open the field screens</a></p></body></html>`;
  return new Response(html, { status: 503, headers: { "Content-Type": "text/html; charset=utf-8" } });
}

// Field navigations: network first (a fresh page when there is signal), the kept copy otherwise.
registerRoute(
  ({ request, url }) => request.mode === "navigate" && url.origin === self.location.origin && /^\/field(\/|$)/.test(url.pathname),
  async ({ request, url }) => {
    const cache = await caches.open(PAGES);
    try {
      const res = await fetchWithTimeout(request, 8000);
      if (isHtml(res)) await cache.put(pageKey(url), res.clone());
      return res;
    } catch {
      return (await cache.match(pageKey(url))) ?? (await cache.match(pageKey(new URL("/field", url)))) ?? offlinePage();
    }
  },
);

// Other navigations: the network, or a page that points to the field screens.
registerRoute(
  ({ request, url }) => request.mode === "navigate" && url.origin === self.location.origin && !/^\/field(\/|$)/.test(url.pathname),
  async ({ request }) => {
    try {
      return await fetch(request);
    } catch {
      return offlinePage();
    }
  },
);

// Data requests of the field pages (single fetch, "….data"). React Router revalidates the
// parent loaders (root, shell, field layout) on every navigation; the field screens have no
// server loader of their own, so one kept answer serves any field address offline.
const dataKey = (url: URL) => pageKey(url);
registerRoute(
  ({ request, url }) => request.method === "GET" && url.origin === self.location.origin && /^\/field.*\.data$/.test(url.pathname),
  async ({ request, url }) => {
    const cache = await caches.open(DATA);
    try {
      const res = await fetchWithTimeout(request, 8000);
      if (res.status === 200 && !url.search.includes("_routes")) await cache.put(dataKey(url), res.clone());
      return res;
    } catch (e) {
      const kept = (await cache.match(dataKey(url))) ?? (await cache.match(dataKey(new URL("/field.data", url))));
      if (kept) return kept;
      throw e;
    }
  },
);

// Route discovery: React Router asks /__manifest for routes it has not seen. Offline, answer
// with every route of the precached build manifest (the client keeps the ones it lacks).
async function routesFromPrecache(): Promise<Response | undefined> {
  if (!RR_MANIFEST) return undefined;
  const res = await matchPrecache(RR_MANIFEST);
  if (!res) return undefined;
  const text = await res.text();
  const json = JSON.parse(text.slice(text.indexOf("{"), text.lastIndexOf("}") + 1)) as { routes: Record<string, unknown> };
  return Response.json(json.routes);
}

registerRoute(
  ({ url }) => url.origin === self.location.origin && url.pathname === "/__manifest",
  async ({ request }) => {
    try {
      const res = await fetchWithTimeout(request, 8000);
      if (res.ok || res.status === 204) return res;
      throw new Error(String(res.status));
    } catch (e) {
      const local = await routesFromPrecache();
      if (local) return local;
      throw e;
    }
  },
);

self.addEventListener("install", (event) => {
  event.waitUntil(warmFieldPages());
});

self.addEventListener("activate", (event) => {
  event.waitUntil(
    (async () => {
      const names = await caches.keys();
      await Promise.all(names.filter((n) => (n.startsWith("field-pages-") && n !== PAGES) || (n.startsWith("field-data-") && n !== DATA)).map((n) => caches.delete(n)));
      await self.clients.claim();
    })(),
  );
});

self.addEventListener("message", (event) => {
  const type = (event.data as { type?: string } | null)?.type;
  if (type === "SKIP_WAITING") void self.skipWaiting();
  // The page asks once this worker is active and the user signed in; the answer (on the
  // message's port) says how many field screens are kept, for "Ready to work offline".
  if (type === "WARM_FIELD_PAGES" || type === "FIELD_COPY_STATUS") {
    const port = event.ports[0];
    event.waitUntil(
      (async () => {
        if (type === "WARM_FIELD_PAGES") await warmFieldPages();
        port?.postMessage(await fieldCopyStatus());
      })(),
    );
  }
});

self.addEventListener("sync", (event) => {
  const e = event as SyncEvent;
  if (e.tag !== "shotbook-outbox") return;
  e.waitUntil(
    syncOutbox({ maxAttempts: 2 }).then((out) => {
      // Throwing asks the browser to try this sync again later, with its own back-off.
      if (!out.ok && (out.reason === "offline" || out.reason === "server")) throw new Error("outbox not drained");
    }),
  );
});
