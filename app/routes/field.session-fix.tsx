// Fix a refused (or still queued) session: the start screen's fields, filled in, with the
// server's messages on the fields they name. Saving writes it to IndexedDB under the same id
// (its shots reference it) and queues it again; its waiting shots go out with it.
import { useState } from "react";
import { Link, useNavigate } from "react-router";
import type { Route } from "./+types/field.session-fix";
import { FieldLoading } from "~/components/field/chrome";
import { sessionErrorsByField, sessionFieldLabelOf } from "~/components/field/field-errors";
import { RefusedBox } from "~/components/field/refused";
import { loadSession } from "~/components/field/session-data";
import { SessionFields, sessionRecordOf, sessionValuesOf, type SessionValues } from "~/components/field/session-fields";
import { SessionHeader, SessionMissing } from "~/components/field/session-header";
import { syncSoon } from "~/offline/autosync";
import { OutboxError, updateSession } from "~/offline/outbox";
import type { LocalSession } from "~/offline/types";

export const meta: Route.MetaFunction = () => [{ title: "Fix session — Shotbook field" }];

export async function clientLoader({ params }: Route.ClientLoaderArgs) {
  return loadSession(params.sessionId);
}
clientLoader.hydrate = true as const;

export function HydrateFallback() {
  return <FieldLoading />;
}

export default function FieldSessionFix({ loaderData }: Route.ComponentProps) {
  const { session } = loaderData;
  if (!session) return <SessionMissing />;
  if (session.state === "synced") {
    return (
      <div className="card space-y-3">
        <h1 className="text-2xl font-bold">This session is on the server</h1>
        <p>Synced sessions are never changed on the tablet.</p>
        <Link to={`/field/session/${session.id}`} className="btn">
          Back to the session
        </Link>
      </div>
    );
  }
  return <FixForm key={session.id} data={loaderData} session={session} />;
}

function FixForm({ data, session }: { data: Route.ComponentProps["loaderData"]; session: LocalSession }) {
  const navigate = useNavigate();
  const [values, setValues] = useState<SessionValues>(() => sessionValuesOf(session.record));
  const [startedAt, setStartedAt] = useState(session.record.startedAt);
  const [errors, setErrors] = useState<Record<string, string>>(() => sessionErrorsByField(session.errors));
  const [saving, setSaving] = useState(false);
  const [saved, setSaved] = useState(false);
  const waiting = data.shots.filter((s) => s.state !== "synced").length;

  function clear(key: string) {
    setSaved(false);
    setErrors((e) => (e[key] ? { ...e, [key]: "" } : e));
  }

  function focusFirstError(errs: Record<string, string>) {
    const first = Object.keys(errs).find((k) => errs[k] && k !== "form");
    requestAnimationFrame(() => document.getElementById(first ?? "session-form-error")?.focus());
  }

  async function onSubmit(e: React.FormEvent) {
    e.preventDefault();
    if (saving) return;
    setSaving(true);
    try {
      await updateSession(session.id, { ...sessionRecordOf(values), startedAt: startedAt.trim() });
      setErrors({});
      setSaved(true);
      syncSoon();
      // A refused session goes back to the outbox that showed it; a queued one to its shots.
      navigate(session.state === "rejected" ? "/field/outbox" : `/field/session/${session.id}`);
    } catch (err) {
      const errs = err instanceof OutboxError ? sessionErrorsByField(err.errors) : { form: `Not saved: ${err instanceof Error ? err.message : String(err)}. What you typed is still here.` };
      setErrors(errs);
      focusFirstError(errs);
    } finally {
      setSaving(false);
    }
  }

  return (
    <div className="space-y-6">
      <SessionHeader data={data} />
      <h2 className="text-2xl font-bold">{session.state === "rejected" ? "Fix the refused session" : "Correct the session's details"}</h2>
      <RefusedBox what="session" errors={session.errors} label={sessionFieldLabelOf} />
      <form onSubmit={onSubmit} noValidate className="card space-y-5" aria-label="Session" data-dirty="true">
        {errors.form ? (
          <p id="session-form-error" tabIndex={-1} className="field-error" role="alert">
            {errors.form}
          </p>
        ) : null}
        <SessionFields
          reference={data.reference}
          values={values}
          errors={errors}
          onChange={(key, v) => {
            setValues((cur) => ({ ...cur, [key]: v }));
            clear(key);
          }}
        >
          <div>
            <label htmlFor="startedAt" className="field-label">
              Start time <span className="font-normal text-muted">(ISO 8601 with the offset)</span>
            </label>
            <input
              id="startedAt"
              name="startedAt"
              className="input num text-lg"
              autoComplete="off"
              value={startedAt}
              aria-invalid={errors.startedAt ? true : undefined}
              aria-describedby={errors.startedAt ? "startedAt-error" : undefined}
              onChange={(e) => {
                setStartedAt(e.target.value);
                clear("startedAt");
              }}
            />
            {errors.startedAt ? (
              <p id="startedAt-error" className="field-error" role="alert">
                {errors.startedAt}
              </p>
            ) : null}
          </div>
        </SessionFields>
        <p className="text-muted">
          The session keeps its id, so its <span className="num">{waiting}</span> {waiting === 1 ? "shot" : "shots"} waiting on this tablet go out with it.
        </p>
        <div className="flex flex-wrap items-center gap-4">
          <button type="submit" className="btn min-h-14 px-8 text-xl" disabled={saving}>
            {saving ? "Saving…" : session.state === "rejected" ? "Save and resend" : "Save changes"}
          </button>
          <p role="status" className="text-lg font-bold" data-testid="save-status">
            {saved ? "Saved. It goes out with the next sync." : ""}
          </p>
        </div>
      </form>
    </div>
  );
}
