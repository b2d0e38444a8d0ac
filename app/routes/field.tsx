// The field area's layout. Its server loader only guards (crew, qa, admin) when the tablet is
// online; offline, the service worker answers with the kept page and the screens below read
// IndexedDB in their clientLoaders.
import { useEffect } from "react";
import { isRouteErrorResponse, Outlet } from "react-router";
import type { Route } from "./+types/field";
import { FIELD } from "~/auth/access";
import { requireRole } from "~/auth/guards.server";
import { FieldChrome } from "~/components/field/chrome";
import { startAutoSync, syncNow } from "~/offline/autosync";
import { fieldDb } from "~/offline/db";
import { outboxCounts, saveShot, startSession } from "~/offline/outbox";
import { readReference, refreshReference } from "~/offline/reference";
import { previewShot } from "~/offline/preview";
import { onReachChange } from "~/offline/reach";
import { prepareOffline } from "~/offline/readiness";
import { requestPersistence } from "~/offline/storage";
import { checkShotRecord } from "~/offline/validate";
import { clearSignInPause, syncStatus } from "~/offline/sync-status";
import type { SyncOptions } from "~/offline/sync";

export const meta: Route.MetaFunction = () => [{ title: "Field — Shotbook" }];

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireRole(request, FIELD);
  return { user: { id: user.id, email: user.email, name: user.name, role: user.role } };
}

declare global {
  interface Window {
    /** The outbox from the browser console or a test script: the same functions the screens use. */
    shotbookField?: Record<string, unknown>;
  }
}

export default function FieldLayout() {
  useEffect(() => {
    window.shotbookField = {
      startSession,
      saveShot,
      checkShotRecord,
      previewShot,
      syncNow,
      syncOutbox: async (opts?: SyncOptions) => (await import("~/offline/sync")).syncOutbox(opts),
      syncStatus,
      outboxCounts,
      readReference,
      refreshReference,
      db: fieldDb(),
    };
    void (async () => {
      // The reference copy is also the first sign of the server: a 200 means it knows the user,
      // so a stale "sign in to send" is over (navigator.onLine is no evidence either way).
      const copied = await refreshReference();
      if (copied.ok) await clearSignInPause();
      startAutoSync();
      void requestPersistence();
      await prepareOffline({ online: copied.ok });
      // Back in reach after a silence: copy the reference data and the screens again.
      onReachChange((r) => {
        if (r !== "reachable") return;
        void refreshReference().then((again) => {
          if (again.ok) void clearSignInPause();
          void prepareOffline({ online: again.ok });
        });
      });
    })();
  }, []);
  return (
    <FieldChrome>
      <Outlet />
    </FieldChrome>
  );
}

export function ErrorBoundary({ error }: Route.ErrorBoundaryProps) {
  // A role without field work (a viewer) is sent to its reports, never offered the tablet's queue (issue 14).
  if (isRouteErrorResponse(error) && error.status === 403) {
    return (
      <div className="card space-y-3" role="alert">
        <h1 className="text-2xl font-bold">Not allowed</h1>
        <p>The field screens are for crews logging check-shots. Your role reads the reports of your projects.</p>
        <p>
          <a className="btn" href="/">
            Go to your start page
          </a>
        </p>
      </div>
    );
  }
  const message = isRouteErrorResponse(error) ? (typeof error.data === "string" ? error.data : error.statusText) : error instanceof Error ? error.message : String(error);
  return (
    <div className="card space-y-3" role="alert">
      <h1 className="text-2xl font-bold">This field screen could not open</h1>
      <p>{message}</p>
      <p>Everything already saved stays queued on this tablet.</p>
      <p className="flex flex-wrap gap-3">
        <a className="btn" href="/field">
          Back to the sessions
        </a>
        <a className="btn-secondary" href="/field/outbox">
          Open the outbox
        </a>
      </p>
    </div>
  );
}
