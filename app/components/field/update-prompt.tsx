// "A new version is ready — reload", offered only while no form holds unsaved input
// (forms mark themselves with data-dirty="true"), so an update never lands mid-entry.
import { useEffect, useState } from "react";

function editing() {
  return document.querySelector('form[data-dirty="true"]') !== null;
}

export function UpdatePrompt() {
  const [apply, setApply] = useState<(() => void) | null>(null);
  const [quiet, setQuiet] = useState(true);
  const [later, setLater] = useState(false);

  useEffect(() => {
    void import("~/sw-register.client").then((m) => m.registerServiceWorker?.((fn) => setApply(() => fn)));
  }, []);

  useEffect(() => {
    if (!apply) return;
    const check = () => setQuiet(!editing());
    check();
    const id = window.setInterval(check, 1000);
    document.addEventListener("input", check, true);
    return () => {
      window.clearInterval(id);
      document.removeEventListener("input", check, true);
    };
  }, [apply]);

  if (!apply || !quiet || later) return null;
  return (
    <div role="status" className="no-print fixed inset-x-0 bottom-0 z-50 border-t-4 border-accent bg-surface px-4 py-3" data-testid="update-prompt">
      <div className="mx-auto flex max-w-6xl flex-wrap items-center gap-3">
        <p className="text-lg font-bold">A new version is ready — reload to use it.</p>
        <button type="button" className="btn" onClick={apply}>
          Reload
        </button>
        <button type="button" className="btn-secondary" onClick={() => setLater(true)}>
          Later
        </button>
      </div>
    </div>
  );
}
