import { useMemo, useState } from "react";
import { data, Link, useSearchParams, type ShouldRevalidateFunctionArgs } from "react-router";
import { parseWithZod } from "@conform-to/zod/v4";
import type { Route } from "./+types/review.sensors.$sensorId";
import { ALL, REVIEWERS } from "~/auth/access";
import { requireRole } from "~/auth/guards.server";
import { createSignOff, listSignOffs } from "~/models/signoffs.server";
import { listProjectsForFilter, sensorReviewHeader } from "~/models/review.server";
import { AppError } from "~/contract/errors";
import { signOffSchema } from "~/components/review/signoff-schema";
import { VerdictBadge } from "~/components/verdict-badge";
import { BandTable, CoverageNote, FiguresGrid, TestsTable, VerdictHeadline } from "~/components/review/report-figures";
import { StatementPanel, TraceabilityPanel } from "~/components/review/statement";
import { DriftChart, MatrixChart } from "~/components/review/charts";
import { ErrorSeriesChart } from "~/components/review/error-series-chart";
import { ShotTable } from "~/components/review/shot-table";
import { worstCell } from "~/components/review/matrix";
import { reportQuery, reportUrls, setExclusion, useSensorReport, type ReportFilters } from "~/components/review/use-report";
import { preloadPlot } from "~/components/review/charts";
import { bandWord, dateOnly, mmSigned } from "~/components/review/format";
import { readFormCapped } from "~/http/body.server";
import { LocalTime } from "~/components/review/local-time";
import { reshootSchema, reshootStateSchema } from "~/contract/reshoot";
import { createReshoot, listReshoots, reshootChoices, ReshootError, setReshootState } from "~/models/reshoots.server";
import { ReshootPanel } from "~/components/review/reshoot-panel";
import { SignOffForm } from "~/components/review/signoff-form";

// issue 16 (v16): in the browser the chart library starts loading as soon as this module runs
// (before hydration), while the report and its series are fetched, not after they arrive
if (typeof document !== "undefined") preloadPlot();

export const meta: Route.MetaFunction = ({ data }) => [{ title: `${data?.sensor.label ?? "Sensor"} — report · Shotbook` }];

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireRole(request, ALL);
  const head = await sensorReviewHeader(user, params.sensorId);
  if (!head) throw new Response("There is no sensor with this id.", { status: 404 });
  const canReview = REVIEWERS.includes(user.role);
  // issue 16: nothing here grows with the shots (the table's photos, targets and reasons come with its page)
  const [projects, signOffs, reshoots, reshootOptions] = await Promise.all([
    listProjectsForFilter(user),
    listSignOffs(user, params.sensorId),
    listReshoots(user, params.sensorId),
    canReview ? reshootChoices(user, params.sensorId) : null,
  ]);
  return { ...head, projects, signOffs, canReview, reshoots, reshootOptions };
}

/** issue 12: a re-shoot request, or closing one; the answers share the sign-off's shape (result + its own key). */
async function reshootAction(user: Parameters<typeof createReshoot>[0], sensorId: string, formData: FormData, intent: string) {
  const schema = intent === "reshoot" ? reshootSchema : reshootStateSchema;
  const submission = parseWithZod(formData, { schema });
  const none = { result: undefined, signedOff: null, reshoot: null, reshootState: null };
  if (submission.status !== "success") return data({ ...none, [intent === "reshoot" ? "reshootResult" : "reshootStateResult"]: submission.reply() }, { status: 400 });
  try {
    if (submission.value.intent === "reshoot") {
      const { intent: _i, ...input } = submission.value;
      const reshoot = await createReshoot(user, sensorId, input);
      return { ...none, reshoot, reshootResult: submission.reply({ resetForm: true }) };
    }
    const row = await setReshootState(user, sensorId, submission.value.requestId, submission.value.state);
    return { ...none, reshootState: row, reshootStateResult: submission.reply() };
  } catch (e) {
    if (e instanceof ReshootError) {
      if (e.status === 404) throw new Response(e.message, { status: 404 });
      const key = intent === "reshoot" ? "reshootResult" : "reshootStateResult";
      return data({ ...none, [key]: submission.reply({ fieldErrors: { [e.field ?? "wanted"]: [e.message] } }) }, { status: 400 });
    }
    throw e;
  }
}

export async function action({ request, params }: Route.ActionArgs) {
  const user = await requireRole(request, REVIEWERS);
  const formData = await readFormCapped(request);
  const intent = String(formData.get("intent") ?? "");
  if (intent === "reshoot" || intent === "reshoot-state") return reshootAction(user, params.sensorId, formData, intent);
  const submission = parseWithZod(formData, { schema: signOffSchema });
  if (submission.status !== "success") return data({ result: submission.reply(), signedOff: null }, { status: 400 });
  try {
    const { intent: _intent, ...input } = submission.value;
    const signedOff = await createSignOff(user, params.sensorId, input);
    return { result: submission.reply({ resetForm: true }), signedOff };
  } catch (e) {
    if (e instanceof AppError) {
      if (e.status === 403 || e.status === 404) throw new Response(e.message, { status: e.status });
      return data({ result: submission.reply({ fieldErrors: { [e.field ?? "decision"]: [e.message] } }), signedOff: null }, { status: 400 });
    }
    throw e;
  }
}

/** Filters live in the address; changing them refetches the report, not this loader. */
export function shouldRevalidate({ currentUrl, nextUrl, formMethod, defaultShouldRevalidate }: ShouldRevalidateFunctionArgs) {
  if (!formMethod && currentUrl.pathname === nextUrl.pathname && currentUrl.search !== nextUrl.search) return false;
  return defaultShouldRevalidate;
}

function filtersFrom(sp: URLSearchParams): ReportFilters {
  return { from: sp.get("from") ?? "", to: sp.get("to") ?? "", sessions: sp.getAll("session"), project: sp.get("project") ?? "" };
}

export default function SensorReport({ loaderData, actionData }: Route.ComponentProps) {
  const { sensor, sessions, projects, signOffs, canReview, reshoots, reshootOptions } = loaderData;
  const [sp, setSp] = useSearchParams();
  const f = filtersFrom(sp);
  const effective = f;
  const { report, series, error, loading, reload, version } = useSensorReport(sensor.id, effective);
  const [busy, setBusy] = useState<string | null>(null);
  const [notice, setNotice] = useState<string | null>(null);

  const sessionLabels = useMemo(() => new Map(sessions.map((s, i) => [s.id, `#${i + 1} ${dateOnly(s.startedAt)} ${s.siteName}`])), [sessions]);
  // issue 16: cells grouped by the server; "why this verdict" from the flagged shots and the included totals
  const cells = useMemo(() => series?.cells ?? [], [series]);
  const explained = useMemo(() => (report && series ? { ...report, shots: series.explain.flagged } : null), [report, series]);
  const worst = useMemo(() => worstCell(cells), [cells]);

  function update(next: Partial<ReportFilters>) {
    setSp(reportQuery({ ...f, ...next }), { replace: true, preventScrollReset: true });
  }

  async function exclusion(id: string, exclude: boolean, reason: string) {
    setBusy(id);
    const err = await setExclusion(id, exclude, reason);
    setBusy(null);
    if (!err) {
      setNotice(exclude ? "Shot excluded; the figures below are recomputed." : "Shot restored; the figures below are recomputed.");
      // the report, the charts and the table's page are read again
      reload();
    }
    return err;
  }

  const csvHref = `/api/sensors/${sensor.id}/report.csv?${reportQuery(effective)}`;
  const printHref = `/review/sensors/${sensor.id}/print?${sp}`;
  const biasLimit = report?.tests.find((t) => t.name === "bias")?.limit ?? sensor.toleranceMm;

  // the reads of the filters the page opened with (later ones are fetched as they change)
  const [first] = useState(() => reportUrls(sensor.id, effective));
  return (
    <div className="space-y-6">
      {/* issue 16 (v16): the browser asks the report and its series while it loads the scripts (use-report.ts reads them) */}
      <link rel="preload" as="fetch" href={first.report} crossOrigin="anonymous" />
      <link rel="preload" as="fetch" href={first.series} crossOrigin="anonymous" />
      <nav aria-label="Breadcrumb" className="text-base">
        <Link
          to={`/review${f.project || f.from || f.to ? `?${new URLSearchParams({ ...(f.project ? { project: f.project } : {}), ...(f.from ? { from: f.from } : {}), ...(f.to ? { to: f.to } : {}) })}` : ""}`}
          className="inline-flex min-h-11 items-center underline underline-offset-4"
        >
          ← All sensors
        </Link>
      </nav>
      <header className="flex flex-wrap items-start justify-between gap-4">
        <div>
          <h1 className="text-3xl font-bold">{sensor.label}</h1>
          <p className="text-lg text-muted">
            {sensor.serial} · {sensor.kind === "cw" ? "continuous-wave" : "pulsed"} · {sensor.wavelengthNm} nm · tolerance ±({sensor.toleranceMm} mm + {sensor.tolerancePpm} ppm × D)
            {sensor.calibrationDue ? ` · calibration due ${sensor.calibrationDue}` : ""}
          </p>
        </div>
        <div className="flex flex-wrap gap-2">
          <Link to={`/review/sensors/${sensor.id}/map?${sp}`} className="btn-secondary">
            Range-error map
          </Link>
          <Link to={printHref} className="btn-secondary">
            Printable report
          </Link>
          <a href={csvHref} className="btn-secondary" download>
            Report CSV
          </a>
          <a href={`/api/shots.geojson?sensor=${sensor.id}`} className="btn-secondary" download>
            Shots GeoJSON
          </a>
        </div>
      </header>

      <section aria-label="Filters" className="card space-y-3">
        <div className="flex flex-wrap items-end gap-4">
          <div>
            <label htmlFor="r-project" className="field-label">
              Project (its acceptance rule)
            </label>
            <select id="r-project" className="input" value={f.project} onChange={(e) => update({ project: e.target.value })}>
              <option value="">No project (default rule)</option>
              {projects.map((p) => (
                <option key={p.id} value={p.id}>
                  {p.name}
                </option>
              ))}
            </select>
          </div>
          <div>
            <label htmlFor="r-from" className="field-label">
              From (date)
            </label>
            <input id="r-from" type="date" className="input" value={f.from} onChange={(e) => update({ from: e.target.value })} />
          </div>
          <div>
            <label htmlFor="r-to" className="field-label">
              To (date, whole day)
            </label>
            <input id="r-to" type="date" className="input" value={f.to} onChange={(e) => update({ to: e.target.value })} />
          </div>
          {f.from || f.to || f.sessions.length || f.project ? (
            <button type="button" className="btn-secondary" onClick={() => setSp(new URLSearchParams(), { replace: true, preventScrollReset: true })}>
              Clear filters
            </button>
          ) : null}
          <p className="pb-2 text-muted" aria-live="polite">
            {loading ? "Computing…" : null}
          </p>
        </div>
        {sessions.length ? (
          <fieldset>
            <legend className="field-label">Sessions (none ticked = all)</legend>
            <div className="flex flex-wrap gap-2">
              {sessions.map((s) => {
                const on = f.sessions.includes(s.id);
                return (
                  <label key={s.id} className={`flex min-h-11 cursor-pointer items-center gap-2 rounded-md border-2 px-3 ${on ? "border-accent bg-bg font-bold" : "border-line"}`}>
                    <input type="checkbox" className="h-5 w-5" checked={on} onChange={() => update({ sessions: on ? f.sessions.filter((x) => x !== s.id) : [...f.sessions, s.id] })} />
                    {sessionLabels.get(s.id)}
                  </label>
                );
              })}
            </div>
          </fieldset>
        ) : (
          <p className="text-muted">No sessions synced for this sensor yet.</p>
        )}
      </section>

      {error ? (
        <div role="alert" className="card border-fail">
          <p className="font-bold">The report could not be loaded: {error}</p>
          <button type="button" className="btn mt-2" onClick={reload}>
            Try again
          </button>
        </div>
      ) : null}
      {!report && !error ? (
        <p className="text-lg" aria-live="polite">
          Loading the report…
        </p>
      ) : null}
      {notice ? (
        <p role="status" className="card border-pass font-bold">
          {notice}{" "}
          <button type="button" className="btn-secondary ml-2" onClick={() => setNotice(null)}>
            OK
          </button>
        </p>
      ) : null}

      {report && series && explained ? (
        <div className={`space-y-6 ${loading ? "opacity-70" : ""}`} data-testid="report" data-verdict={report.verdict}>
          <section aria-labelledby="h-verdict" className="space-y-3">
            <h2 id="h-verdict" className="sr-only">
              Verdict
            </h2>
            <VerdictHeadline report={explained} included={series.explain.included} />
            <StatementPanel report={report} />
            {worst && report.verdict !== "pass" ? (
              <p className="text-lg" data-testid="worst-cell">
                Largest bias: <strong>{bandWord(worst.reflectance).toLowerCase()} targets</strong> in <strong>{bandWord(worst.illuminance).toLowerCase()}</strong> — {mmSigned(worst.biasMm, 1)} over{" "}
                {worst.n} shots{worst.outside ? `, ${worst.outside} outside their limit` : ""}.
              </p>
            ) : null}
            {report.n + report.excluded === 0 ? <p className="card">No shots in this selection. Change the filters or sync a session.</p> : null}
          </section>
          <section aria-labelledby="h-tests" className="card">
            <h2 id="h-tests" className="mb-2 text-2xl font-bold">
              The tests
            </h2>
            <TestsTable tests={report.tests} referenceInVerdict={report.rule.referenceInVerdict} />
          </section>
          <section aria-labelledby="h-trace" className="card">
            <h2 id="h-trace" className="mb-2 text-2xl font-bold">
              Traceability
            </h2>
            <TraceabilityPanel rows={report.traceability} sessionLabel={(id) => sessionLabels.get(id) ?? id} />
            <p className="mt-2">
              <Link className="underline underline-offset-4" to={`/review/sensors/${sensor.id}/history`}>
                Sensor history: bias and RMSE per session over months
              </Link>
            </p>
          </section>
          <section aria-labelledby="h-fig" className="space-y-2">
            <h2 id="h-fig" className="text-2xl font-bold">
              Figures
            </h2>
            <FiguresGrid report={report} />
            {report.airDefaulted.length ? (
              <p className="text-warn font-bold">⚠ {report.airDefaulted.length} session(s) used default air values (20 °C, 1013.25 hPa, 50 % RH) for a missing reading.</p>
            ) : null}
          </section>
          <section aria-labelledby="h-c1" className="card">
            <h2 id="h-c1" className="mb-2 text-2xl font-bold">
              Range error against reference distance
            </h2>
            <ErrorSeriesChart series={series.errorSeries} zeroOffsetMm={report.zeroOffsetMm} scalePpm={report.scalePpm} />
          </section>
          <div className="grid gap-6 lg:grid-cols-2">
            <section aria-labelledby="h-c2" className="card">
              <h2 id="h-c2" className="mb-2 text-2xl font-bold">
                Bias by reflectance × illuminance
              </h2>
              {cells.length ? <MatrixChart cells={cells} worst={worst} /> : <p className="text-muted">No shots with both reflectance and illuminance recorded.</p>}
            </section>
            <section aria-labelledby="h-c3" className="card">
              <h2 id="h-c3" className="mb-2 text-2xl font-bold">
                Bias per session
              </h2>
              {report.drift.length ? <DriftChart drift={report.drift} biasLimitMm={biasLimit} /> : <p className="text-muted">No sessions in this selection.</p>}
            </section>
          </div>
          <section aria-labelledby="h-bands" className="grid gap-6 xl:grid-cols-3">
            <h2 id="h-bands" className="sr-only">
              Breakdowns
            </h2>
            <BandTable title="By reflectance" rows={report.byReflectance} />
            <BandTable title="By illuminance" rows={report.byIlluminance} />
            <BandTable title="By range band" rows={report.byRange} />
          </section>
          <section className="card">
            <CoverageNote coverage={report.coverage} />
          </section>
          <section aria-labelledby="h-shots" className="space-y-2">
            <h2 id="h-shots" className="text-2xl font-bold">
              Check-shots
            </h2>
            <ShotTable
              sensorId={sensor.id}
              selection={{ from: f.from, to: f.to, sessions: f.sessions, ruleProjectId: report.ruleProjectId }}
              version={version}
              sessionLabels={sessionLabels}
              canExclude={canReview}
              busyId={busy}
              onExclude={(id, reason) => exclusion(id, true, reason)}
              onRestore={(id, reason) => exclusion(id, false, reason)}
            />
          </section>
          {canReview ? <SignOffForm verdict={report.verdict} filters={f} projects={projects} actionData={actionData} /> : null}
        </div>
      ) : null}

      <ReshootPanel sensorLabel={sensor.label} reshoots={reshoots} options={reshootOptions} actionData={actionData} />

      <section aria-labelledby="h-history" className="space-y-2">
        <h2 id="h-history" className="text-2xl font-bold">
          Sign-offs
        </h2>
        {signOffs.length === 0 ? (
          <p className="text-muted">This sensor has not been signed off yet.</p>
        ) : (
          <ul className="space-y-2" data-testid="signoff-history">
            {signOffs.map((s) => (
              <li key={s.id} className="card">
                <p className="text-lg font-bold">
                  {s.decision === "approved" ? "✓ Approved" : "✗ Rejected"} · <LocalTime iso={s.createdAt} /> by {s.byName}
                </p>
                <p>
                  Verdict then: <VerdictBadge verdict={s.verdict} /> · bias {mmSigned(s.biasMm, 2)} · {s.projectName ?? "all projects"} ·{" "}
                  {s.periodFrom || s.periodTo ? `${s.periodFrom ?? "start"} to ${s.periodTo ?? "end"}` : "all dates"}
                </p>
                {s.note ? <p className="mt-1">Note: {s.note}</p> : null}
              </li>
            ))}
          </ul>
        )}
      </section>
    </div>
  );
}
