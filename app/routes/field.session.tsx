// Log shots into one session, with the instant check and the session's shots below.
import { Link } from "react-router";
import type { Route } from "./+types/field.session";
import { FieldLoading } from "~/components/field/chrome";
import { SessionHeader, SessionMissing } from "~/components/field/session-header";
import { syncSoon } from "~/offline/autosync";
import { useLiveQuery } from "~/offline/live";
import { ShotForm } from "~/components/field/shot-form";
import { ShotList } from "~/components/field/shot-list";
import { contextOf, loadSession } from "~/components/field/session-data";
import { SessionTraceability } from "~/components/field/traceability-flag";

export const meta: Route.MetaFunction = () => [{ title: "Log shot — Shotbook field" }];

export async function clientLoader({ params }: Route.ClientLoaderArgs) {
  return loadSession(params.sessionId);
}
clientLoader.hydrate = true as const;

export function HydrateFallback() {
  return <FieldLoading />;
}

export default function FieldSession({ loaderData, params }: Route.ComponentProps) {
  const data = useLiveQuery(() => loadSession(params.sessionId), [params.sessionId], loaderData);
  if (!data.session) return <SessionMissing />;
  const ctx = contextOf(data.session, data.reference);
  return (
    <div className="space-y-6">
      <div className="flex flex-wrap items-end justify-between gap-4">
        <SessionHeader data={data} />
        <Link to={`/field/session/${data.session.id}/coverage`} className="btn-secondary">
          Coverage checklist
        </Link>
      </div>
      {!ctx.sensor ? <p className="field-error">This session's sensor is missing from the tablet's reference data: shots are saved, the instant check waits.</p> : null}
      <SessionTraceability session={data.session} ctx={ctx} />
      <ShotForm key={data.session.id} session={data.session} ctx={ctx} onSaved={() => syncSoon()} />
      <section className="space-y-3" aria-labelledby="shots-title">
        <h2 id="shots-title" className="text-2xl font-bold">
          Shots in this session <span className="num">({data.shots.length})</span>
        </h2>
        <ShotList shots={data.shots} site={ctx.site} photoShotIds={data.photoShotIds} />
      </section>
    </div>
  );
}
