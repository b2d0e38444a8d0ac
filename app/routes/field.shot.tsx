// Fix a queued or refused shot: the same form, filled in, with the server's messages on the
// fields they belong to. Saving puts it back in the queue under the same id.
import { Link, useNavigate } from "react-router";
import type { Route } from "./+types/field.shot";
import { FieldLoading } from "~/components/field/chrome";
import { fieldLabelOf } from "~/components/field/field-errors";
import { RefusedBox } from "~/components/field/refused";
import { contextOf, loadSession } from "~/components/field/session-data";
import { SessionHeader, SessionMissing } from "~/components/field/session-header";
import { ShotForm } from "~/components/field/shot-form";
import { editDraftKey } from "~/components/field/shot-form-state";
import { syncSoon } from "~/offline/autosync";
import { fieldDb } from "~/offline/db";
import { discardShot } from "~/offline/outbox";

export const meta: Route.MetaFunction = () => [{ title: "Fix shot — Shotbook field" }];

export async function clientLoader({ params }: Route.ClientLoaderArgs) {
  const [data, shot] = await Promise.all([loadSession(params.sessionId), fieldDb().shots.get(params.shotId)]);
  return { ...data, shot: shot ?? null };
}
clientLoader.hydrate = true as const;

export function HydrateFallback() {
  return <FieldLoading />;
}

export default function FieldShot({ loaderData }: Route.ComponentProps) {
  const navigate = useNavigate();
  const { session, shot } = loaderData;
  if (!session) return <SessionMissing />;
  if (!shot) {
    return (
      <div className="card space-y-3" role="alert">
        <h1 className="text-2xl font-bold">No such shot on this tablet</h1>
        <Link to={`/field/session/${session.id}`} className="btn">
          Back to the session
        </Link>
      </div>
    );
  }
  const ctx = contextOf(session, loaderData.reference);
  if (shot.state === "synced") {
    return (
      <div className="card space-y-3">
        <h1 className="text-2xl font-bold">This shot is on the server</h1>
        <p>Synced shots are never changed. A QA lead can exclude it with a reason in the review.</p>
        <Link to={`/field/session/${session.id}`} className="btn">
          Back to the session
        </Link>
      </div>
    );
  }
  return (
    <div className="space-y-6">
      <SessionHeader data={loaderData} />
      <h2 className="text-2xl font-bold">{shot.state === "rejected" ? "Fix the refused shot" : "Edit the queued shot"}</h2>
      <RefusedBox what="shot" errors={shot.errors} label={fieldLabelOf} />
      <ShotForm
        key={shot.id}
        session={session}
        ctx={ctx}
        existing={shot}
        onSaved={() => {
          syncSoon();
          // Back to the session, where the half-typed new shot waits (its draft is kept apart).
          navigate(`/field/session/${session.id}`);
        }}
      />
      <button
        type="button"
        className="btn-secondary"
        onClick={async () => {
          if (!window.confirm("Throw this shot away? It has not reached the server.")) return;
          await discardShot(shot.id);
          try {
            localStorage.removeItem(editDraftKey(shot.id));
          } catch {}
          navigate(`/field/session/${session.id}`);
        }}
      >
        Discard this shot
      </button>
    </div>
  );
}
