// Registers the service worker (production builds only) and reports a waiting update, so
// the page can offer "A new version is ready — reload" at a moment when no form is open.
import { Workbox } from "workbox-window";

export function registerServiceWorker(onUpdateReady: (apply: () => void) => void) {
  if (!import.meta.env.PROD || !("serviceWorker" in navigator)) return;
  const wb = new Workbox("/sw.js", { scope: "/" });
  wb.addEventListener("waiting", () => {
    onUpdateReady(() => {
      wb.addEventListener("controlling", () => window.location.reload());
      wb.messageSkipWaiting();
    });
  });
  void wb.register().catch((e: unknown) => console.warn("Service worker registration failed", e));
}
