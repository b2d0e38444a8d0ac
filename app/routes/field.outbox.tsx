// The outbox: everything not yet on the server, its state, "Sync now" with a progress bar, and
// refused records with the server's messages and a way to fix and resend.
import { useEffect, useState } from "react";
import { Link } from "react-router";
import type { Route } from "./+types/field.outbox";
import { FieldLoading, formatWhen, useOnline, useSyncStatus } from "~/components/field/chrome";
import { signedMm } from "~/components/field/feedback";
import { fieldLabelOf, sessionFieldLabelOf } from "~/components/field/field-errors";
import { StateWord } from "~/components/field/shot-list";
import { syncNow } from "~/offline/autosync";
import { fieldDb } from "~/offline/db";
import { useLiveQuery } from "~/offline/live";
import { discardShot, resendPhoto, resendSession } from "~/offline/outbox";
import { readReference } from "~/offline/reference";
import { formatBytes, requestPersistence, storageInfo, type StorageInfo } from "~/offline/storage";
import type { FieldError, LocalSession } from "~/offline/types";
import { StuckRecords } from "~/components/outbox/stuck-records";

export const meta: Route.MetaFunction = () => [{ title: "Outbox — Shotbook field" }];

const SHOWN = 100;

const count = (n: number, word: string) => `${n.toLocaleString("en-GB")} ${n === 1 ? word : `${word}s`}`;

async function outboxData() {
  const db = fieldDb();
  const [sessions, shots, photos, reference] = await Promise.all([
    db.sessions.where("state").anyOf("queued", "rejected").sortBy("queuedAt"),
    db.shots.where("state").anyOf("queued", "rejected").sortBy("queuedAt"),
    db.photos.where("state").anyOf("queued", "rejected").sortBy("queuedAt"),
    readReference(),
  ]);
  // a stuck shot is named by its session's sensor and site, and that session may be synced
  const stuckSessionIds = [...new Set(shots.filter((s) => s.stuck).map((s) => s.sessionId))];
  const stuckSessions = stuckSessionIds.length ? await db.sessions.bulkGet(stuckSessionIds) : [];
  const sensorLabel: Record<string, string> = Object.fromEntries(reference.sensors.map((s) => [s.id, s.label]));
  const siteName: Record<string, string> = Object.fromEntries(reference.sites.map((s) => [s.id, s.name]));
  // Every session a message may name (the shots' own too, even when already sent).
  const sessionIds = [...new Set([...sessions.map((s) => s.id), ...shots.map((s) => s.sessionId)])];
  const allSessions = (await db.sessions.bulkGet(sessionIds)).filter((s): s is NonNullable<typeof s> => Boolean(s));
  const names: Record<string, string> = {};
  for (const x of reference.sensors) names[x.id] = x.label;
  for (const x of reference.sites) {
    names[x.id] = x.name;
    for (const t of x.targets) names[t.id] = t.label;
    for (const st of x.stations) names[st.id] = `station ${st.label}`;
  }
  for (const t of reference.tapes) names[t.id] = t.label;
  for (const x of reference.projects) names[x.id] = x.name;
  for (const x of allSessions) names[x.id] = sessionName(x.record, sensorLabel, siteName);
  const targetLabel: Record<string, string> = {};
  for (const x of reference.sites) for (const t of x.targets) targetLabel[t.id] = t.label;
  return {
    sessions,
    shots,
    photos: photos.map(({ blob: _blob, ...p }) => p),
    sensorLabel,
    siteName,
    names,
    targetLabel,
    sessionOf: Object.fromEntries(stuckSessionIds.map((id, i) => [id, stuckSessions[i]])) as Record<string, LocalSession | undefined>,
  };
}

/** A session as the crew knows it: sensor, site and start time (never its id). */
function sessionName(r: { sensorId: string; siteId: string; startedAt: string }, sensorLabel: Record<string, string>, siteName: Record<string, string>) {
  return `${sensorLabel[r.sensorId] ?? "an unknown sensor"} at ${siteName[r.siteId] ?? "an unknown site"}, ${formatWhen(r.startedAt)}`;
}

const UUID = /[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}/gi;

/** The server names records by id; the crew knows them by name. Unknown ids are not shown raw. */
function withNames(message: string, names: Record<string, string>) {
  return message.replace(UUID, (id) => {
    const name = names[id] ?? names[id.toLowerCase()];
    return name ? `“${name}”` : "(a record this tablet does not know)";
  });
}

export async function clientLoader() {
  return outboxData();
}
clientLoader.hydrate = true as const;

export function HydrateFallback() {
  return <FieldLoading />;
}

function Errors({ errors, label = fieldLabelOf, names }: { errors: FieldError[]; label?: (p: string) => string; names: Record<string, string> }) {
  return (
    <ul className="list-disc pl-6" data-testid="record-errors">
      {errors.map((e, i) => (
        <li key={i}>
          <strong>{label(e.path)}</strong>: {withNames(e.message, names)}
        </li>
      ))}
    </ul>
  );
}

export default function FieldOutbox({ loaderData }: Route.ComponentProps) {
  const data = useLiveQuery(() => outboxData(), [], loaderData);
  const status = useSyncStatus();
  const online = useOnline();
  const [storage, setStorage] = useState<StorageInfo | null>(null);
  const [asked, setAsked] = useState(false);
  useEffect(() => {
    void storageInfo().then(setStorage);
  }, [data.shots.length, data.photos.length]);

  const rejectedShots = data.shots.filter((s) => s.state === "rejected");
  const queuedShots = data.shots.filter((s) => s.state === "queued" && !s.stuck);
  const rejectedSessions = data.sessions.filter((s) => s.state === "rejected");
  const queuedSessions = data.sessions.filter((s) => s.state === "queued" && !s.stuck);
  const stuckShots = data.shots.filter((s) => s.state === "queued" && s.stuck);
  const stuckSessions = data.sessions.filter((s) => s.state === "queued" && s.stuck);
  const rejectedPhotos = data.photos.filter((p) => p.state === "rejected");
  const queuedPhotos = data.photos.filter((p) => p.state === "queued");
  const nothing = data.sessions.length + data.shots.length + data.photos.length === 0;
  const refusedTotal = rejectedSessions.length + rejectedShots.length + rejectedPhotos.length;
  const stuckTotal = stuckSessions.length + stuckShots.length;
  const running = Boolean(status?.running);

  return (
    <div className="space-y-6">
      <h1 className="text-3xl font-bold">Outbox</h1>
      <section className="card space-y-3" aria-labelledby="sync-title">
        <h2 id="sync-title" className="sr-only">
          Sync
        </h2>
        <p className="text-xl font-bold" data-testid="outbox-summary">
          {nothing
            ? "Nothing waiting: everything saved on this tablet is on the server."
            : `Waiting: ${count(queuedSessions.length, "session")}, ${count(queuedShots.length, "shot")}, ${count(queuedPhotos.length, "photo")}.`}
          {stuckTotal
            ? ` Set aside, the server fails on them: ${[stuckSessions.length ? count(stuckSessions.length, "session") : "", stuckShots.length ? count(stuckShots.length, "shot") : ""].filter(Boolean).join(", ")}.`
            : ""}
          {refusedTotal
            ? ` Refused, to fix: ${[rejectedSessions.length ? count(rejectedSessions.length, "session") : "", rejectedShots.length ? count(rejectedShots.length, "shot") : "", rejectedPhotos.length ? count(rejectedPhotos.length, "photo") : ""].filter(Boolean).join(", ")}.`
            : ""}
        </p>
        <div className="flex flex-wrap items-center gap-4">
          <button type="button" className="btn min-h-14 px-8 text-xl" disabled={running} onClick={() => void syncNow()}>
            {running ? "Sending…" : "Sync now"}
          </button>
          {!online ? <span className="font-bold text-warn">Offline: the outbox sends by itself when the network returns.</span> : null}
          {status?.needsSignIn ? (
            <a className="btn" href="/login?redirectTo=%2Ffield%2Foutbox" data-testid="sign-in-to-send">
              Sign in to send
            </a>
          ) : null}
        </div>
        {running || (status && status.total > 0 && status.phase !== "idle") ? (
          <div>
            <label htmlFor="sync-progress" className="field-label">
              {status?.phase === "photos" ? "Sending photos" : "Sending records"}:{" "}
              <span className="num">
                {status?.done.toLocaleString("en-GB")} of {status?.total.toLocaleString("en-GB")}
              </span>
            </label>
            <progress id="sync-progress" className="h-6 w-full" max={Math.max(1, status?.total ?? 1)} value={status?.done ?? 0} data-testid="sync-progress" />
          </div>
        ) : null}
        {status?.needsSignIn ? <p className="font-bold">Your sign-in has ended. Nothing is lost: sign in, and sending continues.</p> : null}
        {status?.lastError && !status.needsSignIn ? (
          <p className="font-bold text-warn" role="status">
            {status.lastError}
            {/* A retry time means something only while that run is alive (not after a relaunch). */}
            {running && status.nextRetryAt && Date.parse(status.nextRetryAt) > Date.now() ? ` Next try about ${formatWhen(status.nextRetryAt)}.` : ""}
          </p>
        ) : null}
        <p className="text-muted">Last complete sync: {formatWhen(status?.lastSyncAt)}</p>
      </section>

      {rejectedSessions.length + rejectedShots.length + rejectedPhotos.length > 0 ? (
        <section className="space-y-3" aria-labelledby="refused-title">
          <h2 id="refused-title" className="text-2xl font-bold text-fail">
            ✕ Refused by the server: fix and resend
          </h2>
          <ul className="space-y-3">
            {rejectedSessions.map((s) => (
              <li key={s.id} className="card space-y-2 border-fail" data-testid="rejected-session">
                <p className="font-bold">Session: {data.names[s.id]}</p>
                <Errors errors={s.errors} label={sessionFieldLabelOf} names={data.names} />
                <p className="text-sm">Its shots wait until the session is accepted. Resend it unchanged once an admin has fixed the reference data.</p>
                <p className="flex flex-wrap gap-3">
                  <Link className="btn" to={`/field/session/${s.id}/fix`}>
                    Fix and resend
                  </Link>
                  <button type="button" className="btn-secondary" onClick={() => void resendSession(s.id).then(() => syncNow())}>
                    Resend unchanged
                  </button>
                </p>
              </li>
            ))}
            {rejectedShots.map((s) => (
              <li key={s.id} className="card space-y-2 border-fail" data-testid="rejected-shot">
                <p className="font-bold">
                  Shot {s.record.targetId && data.targetLabel[s.record.targetId] ? `at ${data.targetLabel[s.record.targetId]} ` : ""}of {formatWhen(s.record.takenAt)}
                  {s.preview ? `, reference ${s.preview.referenceM.toFixed(3)} m, error ${signedMm(s.preview.errorMm)}` : ""}
                </p>
                <p className="text-sm">Session: {data.names[s.sessionId] ?? "not on this tablet"}</p>
                <Errors errors={s.errors} names={data.names} />
                <p className="flex flex-wrap gap-3">
                  <Link className="btn" to={`/field/session/${s.sessionId}/shot/${s.id}`}>
                    Fix and resend
                  </Link>
                  <button type="button" className="btn-secondary" onClick={() => window.confirm("Throw this shot away?") && void discardShot(s.id)}>
                    Discard
                  </button>
                </p>
              </li>
            ))}
            {rejectedPhotos.map((p) => (
              <li key={p.id} className="card space-y-2 border-fail" data-testid="rejected-photo">
                <p className="font-bold">
                  Photo {p.name} ({formatBytes(p.bytes)})
                </p>
                <Errors errors={p.errors} label={() => "Photo"} names={data.names} />
                <button type="button" className="btn-secondary" onClick={() => void resendPhoto(p.id).then(() => syncNow())}>
                  Resend the photo
                </button>
              </li>
            ))}
          </ul>
        </section>
      ) : null}

      <StuckRecords
        sessions={stuckSessions}
        shots={stuckShots}
        sessionOf={data.sessionOf}
        sensorLabel={data.sensorLabel}
        siteName={data.siteName}
        targetLabel={data.targetLabel}
        onRetry={() => void syncNow()}
        onDiscard={(id) => void discardShot(id)}
      />

      {queuedSessions.length + queuedShots.length + queuedPhotos.length > 0 ? (
        <section className="space-y-3" aria-labelledby="waiting-title">
          <h2 id="waiting-title" className="text-2xl font-bold">
            ◷ Waiting to be sent
          </h2>
          {queuedSessions.length ? (
            <ul className="space-y-1">
              {queuedSessions.map((s) => (
                <li key={s.id} className="flex flex-wrap gap-x-3" data-testid="queued-session">
                  <StateWord state={s.state} /> Session: {data.names[s.id]}
                </li>
              ))}
            </ul>
          ) : null}
          {queuedShots.length ? (
            <ul className="num space-y-1">
              {queuedShots.slice(0, SHOWN).map((s) => (
                <li key={s.id} className="flex flex-wrap gap-x-3" data-testid="queued-shot">
                  <StateWord state={s.state} /> Shot {formatWhen(s.record.takenAt)}
                  {s.preview ? ` · ${s.preview.referenceM.toFixed(3)} m · ${signedMm(s.preview.errorMm)}` : ""}
                </li>
              ))}
              {queuedShots.length > SHOWN ? <li className="text-muted">and {(queuedShots.length - SHOWN).toLocaleString("en-GB")} more shots</li> : null}
            </ul>
          ) : null}
          {queuedPhotos.length ? (
            <ul className="space-y-1">
              {queuedPhotos.map((p) => (
                <li key={p.id} className="flex flex-wrap gap-x-3" data-testid="queued-photo">
                  <StateWord state={p.state} /> Photo {p.name} · {formatBytes(p.bytes)} · goes after its shot
                </li>
              ))}
            </ul>
          ) : null}
        </section>
      ) : null}

      <section className="card space-y-2" aria-labelledby="storage-title">
        <h2 id="storage-title" className="text-xl font-bold">
          Storage on this tablet
        </h2>
        <p className="num" data-testid="storage-use">
          Used: {formatBytes(storage?.usageBytes ?? null)} of {formatBytes(storage?.quotaBytes ?? null)} available to Shotbook.
        </p>
        <p>
          {storage?.persisted
            ? "Kept: the browser will not clear this storage to make room."
            : storage?.persisted === false
              ? "Not yet protected: the browser may clear it when the tablet runs short of space."
              : "The browser does not say whether this storage is protected."}
        </p>
        {storage?.persisted === false ? (
          <button
            type="button"
            className="btn-secondary"
            onClick={async () => {
              await requestPersistence();
              setAsked(true);
              setStorage(await storageInfo());
            }}
          >
            Ask the browser to keep it
          </button>
        ) : null}
        {asked && storage?.persisted === false ? <p className="text-sm">The browser said no for now; installing Shotbook on the home screen usually helps.</p> : null}
      </section>
    </div>
  );
}
