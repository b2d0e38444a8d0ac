// Check-shots from a point cloud (issue 18, ranging.md §8): choose the session and the station,
// upload the LAS/LAZ file, see one row per target with its plot, accept → shots through the
// sync ingest. The upload goes to POST /api/scans (the same contract scripts use).
import { useState } from "react";
import { Link } from "react-router";
import type { Route } from "./+types/review.scans";
import { FIELD } from "~/auth/access";
import { requireRole } from "~/auth/guards.server";
import { scanImportContext } from "~/models/scans.server";
import type { ScanAnswer } from "~/models/scan-schemas";
import { ScanRowsTable, uploadWithProgress } from "~/components/review/scan-rows";
import { dateTime } from "~/components/review/format";

export const meta: Route.MetaFunction = () => [{ title: "Check-shots from a scan · Shotbook" }];

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireRole(request, FIELD);
  return scanImportContext(user);
}

type Phase = "idle" | "uploading" | "working" | "done";

export default function ScanImportPage({ loaderData }: Route.ComponentProps) {
  const { sessions, stations, targets } = loaderData;
  const [sessionId, setSessionId] = useState("");
  const [stationId, setStationId] = useState("");
  const [heightM, setHeightM] = useState("0");
  const [radiusM, setRadiusM] = useState("0.30");
  const [minPoints, setMinPoints] = useState("50");
  const [file, setFile] = useState<File | null>(null);
  const [phase, setPhase] = useState<Phase>("idle");
  const [progress, setProgress] = useState(0);
  const [answer, setAnswer] = useState<ScanAnswer | null>(null);
  const [committed, setCommitted] = useState(false);
  const [errors, setErrors] = useState<{ path: string; message: string }[]>([]);
  const [error, setError] = useState<string | null>(null);

  const session = sessions.find((s) => s.id === sessionId);
  const siteStations = stations.filter((s) => s.siteId === session?.siteId);
  const siteTargets = targets.filter((t) => t.siteId === session?.siteId);
  const found = answer?.targets.filter((t) => t.status === "found" && t.shotId && !t.errors?.length) ?? [];

  async function send(commit: boolean) {
    const problems: { path: string; message: string }[] = [];
    if (!sessionId) problems.push({ path: "sessionId", message: "Choose the session the scan belongs to." });
    if (!stationId) problems.push({ path: "stationId", message: "Choose the station the scanner stood on." });
    if (!file) problems.push({ path: "file", message: "Choose the LAS or LAZ file." });
    setErrors(problems);
    setError(null);
    if (problems.length) return;
    const form = new FormData();
    form.set("sessionId", sessionId);
    form.set("stationId", stationId);
    form.set("instrumentHeightM", heightM);
    form.set("searchRadiusM", radiusM);
    form.set("minPoints", minPoints);
    form.set("plot", "true");
    if (commit) form.set("commit", "true");
    form.set("file", file!);
    setPhase("uploading");
    setProgress(0);
    try {
      const res = await uploadWithProgress("/api/scans", form, (f) => {
        setProgress(Math.round(f * 100));
        if (f >= 1) setPhase("working");
      });
      if (res.status !== 200) {
        setErrors(res.body.errors ?? []);
        setError(res.body.error ?? `The server answered ${res.status}.`);
        setPhase("idle");
        return;
      }
      setAnswer(res.body);
      setCommitted(commit);
      setPhase("done");
    } catch (e) {
      setError(e instanceof Error ? e.message : String(e));
      setPhase("idle");
    }
  }

  const errorOf = (path: string) => errors.find((e) => e.path === path)?.message;
  const fieldError = (path: string) => {
    const m = errorOf(path);
    return m ? (
      <p id={`e-${path}`} className="field-error" role="alert">
        ⚠ {m}
      </p>
    ) : null;
  };
  const busy = phase === "uploading" || phase === "working";

  return (
    <div className="space-y-6">
      <nav aria-label="Breadcrumb">
        <Link to="/review" className="inline-flex min-h-11 items-center underline underline-offset-4">
          ← Sensor verdicts
        </Link>
      </nav>
      <h1 className="text-3xl font-bold">Check-shots from a scan</h1>
      <p className="max-w-3xl">
        Upload the point cloud (LAS 1.2–1.4 or LAZ) of one setup on a surveyed station, in the site's grid. Shotbook finds each surveyed target board in it, fits a plane to the points within the
        search radius and measures the range along the line of sight from the instrument to the board's centre. Nothing is stored until you accept.
      </p>

      <section className="card grid gap-4 sm:grid-cols-2 lg:grid-cols-3" aria-label="The scan">
        <div className="sm:col-span-2">
          <label htmlFor="s-session" className="field-label">
            Session
          </label>
          <select
            id="s-session"
            className="input"
            value={sessionId}
            aria-invalid={errorOf("sessionId") ? true : undefined}
            aria-describedby={errorOf("sessionId") ? "e-sessionId" : undefined}
            onChange={(e) => {
              setSessionId(e.target.value);
              setStationId("");
              setAnswer(null);
            }}
          >
            <option value="">Choose a synced session…</option>
            {sessions.map((s) => (
              <option key={s.id} value={s.id}>
                {dateTime(s.startedAt)} · {s.sensorLabel} · {s.siteName}
              </option>
            ))}
          </select>
          {fieldError("sessionId")}
        </div>
        <div>
          <label htmlFor="s-station" className="field-label">
            Station
          </label>
          <select
            id="s-station"
            className="input"
            value={stationId}
            disabled={!session}
            aria-invalid={errorOf("stationId") ? true : undefined}
            aria-describedby={errorOf("stationId") ? "e-stationId" : undefined}
            onChange={(e) => {
              setStationId(e.target.value);
              setAnswer(null);
            }}
          >
            <option value="">{session ? "Choose the scanner's station…" : "Choose a session first"}</option>
            {siteStations.map((s) => (
              <option key={s.id} value={s.id} disabled={!s.hasGrid}>
                {s.label}
                {s.hasGrid ? "" : " (no grid coordinates)"}
              </option>
            ))}
          </select>
          {fieldError("stationId")}
        </div>
        <div>
          <label htmlFor="s-height" className="field-label">
            Instrument height above the mark (m)
          </label>
          <input id="s-height" className="input" inputMode="decimal" value={heightM} onChange={(e) => setHeightM(e.target.value)} aria-invalid={errorOf("instrumentHeightM") ? true : undefined} />
          {fieldError("instrumentHeightM")}
        </div>
        <div>
          <label htmlFor="s-radius" className="field-label">
            Search radius around each target (m)
          </label>
          <input id="s-radius" className="input" inputMode="decimal" value={radiusM} onChange={(e) => setRadiusM(e.target.value)} aria-invalid={errorOf("searchRadiusM") ? true : undefined} />
          {fieldError("searchRadiusM")}
        </div>
        <div>
          <label htmlFor="s-min" className="field-label">
            Fewest points for a target
          </label>
          <input id="s-min" className="input" inputMode="numeric" value={minPoints} onChange={(e) => setMinPoints(e.target.value)} aria-invalid={errorOf("minPoints") ? true : undefined} />
          {fieldError("minPoints")}
        </div>
        <div className="sm:col-span-2 lg:col-span-3">
          <label htmlFor="s-file" className="field-label">
            Point cloud (.las or .laz, up to 512 MB)
          </label>
          <input
            id="s-file"
            type="file"
            accept=".las,.laz"
            className="input"
            aria-invalid={errorOf("file") ? true : undefined}
            onChange={(e) => {
              setFile(e.target.files?.[0] ?? null);
              setAnswer(null);
            }}
          />
          {fieldError("file")}
          {session ? (
            <p className="mt-1 text-sm text-muted">
              {siteTargets.length} targets at {session.siteName}; {siteTargets.filter((t) => !t.hasGrid).length} without grid coordinates cannot be found in a scan.
            </p>
          ) : null}
        </div>
        <div className="flex flex-wrap items-center gap-3 sm:col-span-2 lg:col-span-3">
          <button type="button" className="btn" disabled={busy} onClick={() => void send(false)}>
            Find the targets
          </button>
          {busy ? (
            <div className="min-w-64 flex-1">
              <label htmlFor="s-progress" className="field-label">
                {phase === "uploading" ? `Uploading ${file?.name} — ${progress} %` : "Reading the points and fitting the boards…"}
              </label>
              <progress id="s-progress" max={100} value={phase === "uploading" ? progress : undefined} className="h-6 w-full" />
            </div>
          ) : null}
        </div>
        {error ? (
          <p className="field-error sm:col-span-2 lg:col-span-3" role="alert">
            ⚠ {error}
          </p>
        ) : null}
      </section>

      {answer ? (
        <section className="space-y-3" aria-labelledby="h-rows">
          <h2 id="h-rows" className="text-2xl font-bold">
            Targets in {file?.name}
          </h2>
          <p className="text-sm text-muted">
            File SHA-256{" "}
            <code className="break-all" data-testid="file-sha">
              {answer.fileSha256}
            </code>{" "}
            — kept with every shot; importing the same file again finds its shots already stored.
          </p>
          <ScanRowsTable rows={answer.targets} />
          {committed ? (
            <p className="text-lg font-bold" role="status" data-testid="commit-summary">
              {answer.targets.filter((t) => t.sync?.status === "accepted").length} shots stored, {answer.targets.filter((t) => t.sync?.status === "duplicate").length} already stored,{" "}
              {answer.targets.filter((t) => t.sync?.status === "rejected").length} refused.
            </p>
          ) : found.length ? (
            <div className="flex flex-wrap items-center gap-3">
              <button type="button" className="btn" disabled={busy} onClick={() => void send(true)}>
                Accept {found.length} check-shot{found.length === 1 ? "" : "s"}
              </button>
              <span className="text-muted">The file is sent again and each found target is stored as a shot of this session.</span>
            </div>
          ) : (
            <p className="text-warn">No target was found: check the station, the instrument height and that the file is in the site's grid.</p>
          )}
        </section>
      ) : null}
    </div>
  );
}
