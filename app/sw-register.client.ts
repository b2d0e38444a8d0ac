// Registers the service worker (production builds only) and reports a waiting update, so
// the page can offer "A new version is ready — reload" at a moment when no form is open.
import { Workbox } from "workbox-window";

export function registerServiceWorker(onUpdateReady: (apply: () => void) => void) {
  if (!import.meta.env.PROD || !("serviceWorker" in navigator)) return;
  const wb = new Workbox("/sw.js", { scope: "/" });
  let offered: ServiceWorker | null = null;
  let registration: ServiceWorkerRegistration | undefined;
  const offer = (waiting: ServiceWorker | null | undefined) => {
    if (!waiting || waiting === offered) return;
    // On a first visit the new worker passes through "installed" (briefly reg.waiting) on its
    // way to active: that is no update. An update is a waiting worker beside an active one
    // that controls this page.
    const active = registration?.active;
    if (!active || active === waiting || !navigator.serviceWorker.controller) return;
    offered = waiting;
    document.documentElement.dataset.swUpdate = "waiting";
    onUpdateReady(() => {
      let done = false;
      const reload = () => {
        if (done) return;
        done = true;
        window.location.reload();
      };
      navigator.serviceWorker.addEventListener("controllerchange", reload, { once: true });
      waiting.addEventListener("statechange", () => waiting.state === "activated" && reload());
      waiting.postMessage({ type: "SKIP_WAITING" });
    });
  };
  wb.addEventListener("waiting", (e) => {
    if (e.isUpdate) offer(e.sw);
  });
  void wb
    .register()
    .then((reg) => {
      if (!reg) return;
      registration = reg;
      // Also catch a worker that was already waiting, or one found by the browser's own checks.
      const check = () => offer(reg.waiting);
      check();
      reg.addEventListener("updatefound", () => reg.installing?.addEventListener("statechange", check));
      window.setInterval(check, 5000);
      window.setInterval(() => void reg.update().catch(() => {}), 60 * 60 * 1000);
    })
    .catch((e: unknown) => console.warn("Service worker registration failed", e));
}
