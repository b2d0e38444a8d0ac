// Records the server failed on (issue 11): found by the sync client when a batch kept failing,
// kept queued so nothing is lost, and named here the way the crew knows them — sensor, site and
// time — with the server's own message. Everything else in the outbox goes out meanwhile.
import { Link } from "react-router";
import { formatWhen } from "~/components/field/chrome";
import type { LocalSession, LocalShot } from "~/offline/types";

export type StuckRecordsProps = {
  sessions: LocalSession[];
  shots: LocalShot[];
  /** The session of each stuck shot (it may be on the server already). */
  sessionOf: Record<string, LocalSession | undefined>;
  sensorLabel: Record<string, string>;
  siteName: Record<string, string>;
  targetLabel: Record<string, string>;
  onRetry: () => void;
  onDiscard: (shotId: string) => void;
};

export function StuckRecords({ sessions, shots, sessionOf, sensorLabel, siteName, targetLabel, onRetry, onDiscard }: StuckRecordsProps) {
  if (sessions.length + shots.length === 0) return null;
  const where = (s: LocalSession | undefined) => (s ? `${sensorLabel[s.record.sensorId] ?? s.record.sensorId} at ${siteName[s.record.siteId] ?? s.record.siteId}` : "a session not on this tablet");
  return (
    <section className="space-y-3" aria-labelledby="stuck-title">
      <h2 id="stuck-title" className="text-2xl font-bold text-warn">
        ⚠ The server fails on these: kept on the tablet
      </h2>
      <p>
        The server answered with an error for these records alone, so they were set aside and everything else was sent. They stay queued and are tried again at each sync; fix one if its values look
        wrong, or tell an admin what the server said.
      </p>
      <ul className="space-y-3">
        {sessions.map((s) => (
          <li key={s.id} className="card space-y-2 border-warn" data-testid="stuck-session">
            <p className="font-bold">
              Session: {where(s)}, {formatWhen(s.record.startedAt)}
            </p>
            <p>
              Server error {s.stuck!.status}: <span data-testid="stuck-message">{s.stuck!.message}</span>
            </p>
            <p className="text-sm text-muted">Its shots wait until the session is on the server. Last tried {formatWhen(s.stuck!.at)}.</p>
            <p className="flex flex-wrap gap-3">
              <Link className="btn" to={`/field/session/${s.id}/fix`}>
                Fix the session
              </Link>
              <button type="button" className="btn-secondary" onClick={onRetry}>
                Try again now
              </button>
            </p>
          </li>
        ))}
        {shots.map((s) => (
          <li key={s.id} className="card space-y-2 border-warn" data-testid="stuck-shot">
            <p className="font-bold">
              Shot: {where(sessionOf[s.sessionId])}, {formatWhen(s.record.takenAt)}
              {s.record.targetId && targetLabel[s.record.targetId] ? `, target ${targetLabel[s.record.targetId]}` : ""}
            </p>
            <p>
              Server error {s.stuck!.status}: <span data-testid="stuck-message">{s.stuck!.message}</span>
            </p>
            <p className="text-sm text-muted">Last tried {formatWhen(s.stuck!.at)}.</p>
            <p className="flex flex-wrap gap-3">
              <Link className="btn" to={`/field/session/${s.sessionId}/shot/${s.id}`}>
                Fix the shot
              </Link>
              <button type="button" className="btn-secondary" onClick={onRetry}>
                Try again now
              </button>
              <button type="button" className="btn-secondary" onClick={() => window.confirm("Throw this shot away?") && onDiscard(s.id)}>
                Discard
              </button>
            </p>
          </li>
        ))}
      </ul>
    </section>
  );
}
