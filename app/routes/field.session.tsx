// Log shots into one session, with the instant check and the session's shots below. The
// session's own actions: correct its details while it is still on the tablet, end it with a
// summary (shots, within/outside, what the coverage still lacks), or throw it away before it
// is sent (started with the wrong sensor, say).
import { useState } from "react";
import { Link, useNavigate } from "react-router";
import type { Route } from "./+types/field.session";
import { FieldLoading } from "~/components/field/chrome";
import { SessionHeader, SessionMissing } from "~/components/field/session-header";
import { syncSoon } from "~/offline/autosync";
import { useLiveQuery } from "~/offline/live";
import { ReshootNotice } from "~/components/field/reshoot-notice";
import { discardSession } from "~/offline/outbox";
import { ShotForm } from "~/components/field/shot-form";
import { draftKey, editDraftKey } from "~/components/field/shot-form-state";
import { ShotList } from "~/components/field/shot-list";
import { contextOf, loadSession, sessionCoverage, type SessionData } from "~/components/field/session-data";
import type { PreviewContext } from "~/offline/preview";
import { SessionTraceability } from "~/components/field/traceability-flag";

export const meta: Route.MetaFunction = () => [{ title: "Log shot — Shotbook field" }];

export async function clientLoader({ params }: Route.ClientLoaderArgs) {
  return loadSession(params.sessionId);
}
clientLoader.hydrate = true as const;

export function HydrateFallback() {
  return <FieldLoading />;
}

const band = (label: string) => `${label.replace("-", "–")} m`;

function EndSummary({ data, ctx, onClose }: { data: SessionData; ctx: PreviewContext; onClose: () => void }) {
  const shots = data.shots;
  const within = shots.filter((s) => s.preview?.within === true).length;
  const outside = shots.filter((s) => s.preview?.within === false).length;
  const unchecked = shots.length - within - outside;
  const waiting = shots.filter((s) => s.state !== "synced").length;
  const { result, missingHere, outOfReach } = sessionCoverage(data, ctx);
  const lacks = result ? [...missingHere.map((c) => `${band(c.rangeBand)} ${c.reflectance}: ${c.need - c.have} more`), ...(result.needsBrightSun ? ["a shot in bright sun (≥ 50 klux)"] : [])] : [];
  return (
    <section className="card space-y-3 border-accent" aria-labelledby="end-title" data-testid="end-summary" tabIndex={-1} id="end-summary">
      <h2 id="end-title" className="text-2xl font-bold">
        Session summary
      </h2>
      <p className="num text-lg">
        <strong>{shots.length}</strong> {shots.length === 1 ? "shot" : "shots"}: <strong>{within}</strong> within the limit, <strong>{outside}</strong> outside
        {unchecked ? `, ${unchecked} not checked on the tablet` : ""}.
      </p>
      <p className="num">
        {waiting ? `${waiting} ${waiting === 1 ? "shot waits in the outbox and goes" : "shots wait in the outbox and go"} out with the next sync.` : "Everything of this session is on the server."}
      </p>
      {result ? (
        result.complete || lacks.length === 0 ? (
          <p className="font-bold text-pass">{result.complete ? "Coverage complete." : "Everything this site can give is covered."}</p>
        ) : (
          <div>
            <p className="font-bold text-warn">Coverage still lacks:</p>
            <ul className="num list-disc pl-6" data-testid="end-lacks">
              {lacks.map((l) => (
                <li key={l}>{l}</li>
              ))}
            </ul>
          </div>
        )
      ) : (
        <p className="text-muted">The coverage needs the session's sensor in the tablet's reference data.</p>
      )}
      {outOfReach.length ? <p className="text-muted">Out of this site's reach: {outOfReach.map((c) => `${band(c.rangeBand)} ${c.reflectance}`).join(", ")}.</p> : null}
      <p className="flex flex-wrap gap-3">
        <Link to="/field" className="btn">
          Done: back to the sessions
        </Link>
        <button type="button" className="btn-secondary" onClick={onClose}>
          Keep logging shots
        </button>
      </p>
    </section>
  );
}

export default function FieldSession({ loaderData, params }: Route.ComponentProps) {
  const data = useLiveQuery(() => loadSession(params.sessionId), [params.sessionId], loaderData);
  const navigate = useNavigate();
  const [ending, setEnding] = useState(false);
  const [problem, setProblem] = useState("");
  if (!data.session) return <SessionMissing />;
  const session = data.session;
  const ctx = contextOf(session, data.reference);
  const onTablet = session.state !== "synced" && data.shots.every((s) => s.state !== "synced");

  async function discard() {
    const n = data.shots.length;
    const what = `${ctx.sensor?.label ?? "this sensor"} at ${ctx.site?.name ?? "this site"}`;
    if (!window.confirm(`Throw away the session ${what} and its ${n} ${n === 1 ? "shot" : "shots"}? None of it has reached the server. This cannot be undone.`)) return;
    const out = await discardSession(session.id);
    if (!out.discarded) {
      setProblem(out.reason);
      return;
    }
    try {
      localStorage.removeItem(draftKey(session.id));
      for (const s of data.shots) localStorage.removeItem(editDraftKey(s.id));
    } catch {}
    navigate("/field");
  }

  return (
    <div className="space-y-6">
      <div className="flex flex-wrap items-end justify-between gap-4">
        <SessionHeader data={data} />
        <div className="flex flex-wrap gap-2">
          <Link to={`/field/session/${session.id}/coverage`} className="btn-secondary">
            Coverage checklist
          </Link>
          {session.state !== "synced" ? (
            <Link to={`/field/session/${session.id}/fix`} className="btn-secondary">
              Correct session details
            </Link>
          ) : null}
          <button
            type="button"
            className="btn-secondary"
            aria-expanded={ending}
            onClick={() => {
              setEnding(true);
              requestAnimationFrame(() => document.getElementById("end-summary")?.focus());
            }}
          >
            End session
          </button>
        </div>
      </div>
      {problem ? (
        <p className="field-error" role="alert">
          {problem}
        </p>
      ) : null}
      {ending ? <EndSummary data={data} ctx={ctx} onClose={() => setEnding(false)} /> : null}
      {!ctx.sensor ? <p className="field-error">This session's sensor is missing from the tablet's reference data: shots are saved, the instant check waits.</p> : null}
      <ReshootNotice reference={data.reference} sensorId={session.record.sensorId} siteId={session.record.siteId} />
      <SessionTraceability session={session} ctx={ctx} />
      <ShotForm key={session.id} session={session} ctx={ctx} onSaved={() => syncSoon()} />
      <section className="space-y-3" aria-labelledby="shots-title">
        <h2 id="shots-title" className="text-2xl font-bold">
          Shots in this session <span className="num">({data.shots.length})</span>
        </h2>
        <ShotList shots={data.shots} site={ctx.site} photoShotIds={data.photoShotIds} />
      </section>
      {onTablet ? (
        <section className="card space-y-2 border-fail" aria-labelledby="discard-title">
          <h2 id="discard-title" className="text-xl font-bold">
            Wrong sensor or site?
          </h2>
          <p>Nothing of this session has reached the server yet. Correct its details above, or throw it away with its shots.</p>
          <button type="button" className="btn-secondary" onClick={() => void discard()}>
            Discard this session
          </button>
        </section>
      ) : null}
    </div>
  );
}
