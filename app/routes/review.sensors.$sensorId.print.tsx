import { useMemo } from "react";
import type { Route } from "./+types/review.sensors.$sensorId.print";
import { ALL } from "~/auth/access";
import { requireRole } from "~/auth/guards.server";
import { answering } from "~/http/app-error.server";
import { listSignOffs } from "~/models/signoffs.server";
import { listProjectsForFilter, reportWithCells, sensorReviewHeader, shotExtras } from "~/models/review.server";
import { BandTable, CoverageNote, FiguresGrid, TestsTable, VerdictHeadline } from "~/components/review/report-figures";
import { StatementPanel, TraceabilityPanel } from "~/components/review/statement";
import { laserCaution } from "~/domain";
import { dateTime, mmSigned } from "~/components/review/format";
import { DriftChart, ErrorVsDistanceChart, MatrixChart } from "~/components/review/charts";
import { worstCell } from "~/components/review/matrix";
import { LocalTime } from "~/components/review/local-time";
import { VerdictBadge } from "~/components/verdict-badge";
import { printSheetCss } from "~/components/review/print-sheet";

export const meta: Route.MetaFunction = ({ data }) => [{ title: `Range verification report — ${data?.sensor.label ?? "sensor"}` }];

const DATE = /^\d{4}-\d{2}-\d{2}$/;

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireRole(request, ALL);
  const url = new URL(request.url);
  const head = await sensorReviewHeader(user, params.sensorId);
  if (!head) throw new Response("There is no sensor with this id.", { status: 404 });
  const from = url.searchParams.get("from");
  const to = url.searchParams.get("to");
  const projectId = url.searchParams.get("project") || null;
  const q = { from: from && DATE.test(from) ? from : null, to: to && DATE.test(to) ? to : null, sessionIds: url.searchParams.getAll("session"), projectId };
  const [rc, signOffs, projects, extras] = await answering(() =>
    Promise.all([reportWithCells(user, params.sensorId, q), listSignOffs(user, params.sensorId, 5), listProjectsForFilter(user), shotExtras(user, params.sensorId)]),
  );
  if (!rc) throw new Response("There is no sensor with this id.", { status: 404 });
  const { report, cells } = rc;
  const project = projects.find((p) => p.id === projectId) ?? null;
  const exclusions = report.shots.filter((s) => s.excluded).map((s) => ({ id: s.id, takenAt: s.takenAt, referenceM: s.referenceM, errorMm: s.errorMm, reason: extras.reasons[s.id] ?? "" }));
  return { ...head, report, cells, worst: worstCell(cells), signOffs, project, exclusions, query: q, generatedAt: new Date().toISOString(), by: user.name || user.email };
}

/** The shared sheet (print-sheet.ts) with this page's own rules. */
const pageCss = (footer: string) =>
  printSheetCss(footer, {
    // sections may run on over a page (no half-empty pages); what must stay whole stays whole
    print: `  .print-page h2 { font-size: 13pt; break-after: avoid; }
  .print-page figure, .print-page tr, .print-page table, .print-page dl > div, .print-page li, .print-page .keep { break-inside: avoid; }
  .print-page.space-y-5 > :not(:last-child) { margin-bottom: 0.9rem; }`,
  });

export default function PrintReport({ loaderData }: Route.ComponentProps) {
  const { sensor, sessions, report, cells, worst, signOffs, project, exclusions, query, generatedAt, by } = loaderData;
  const used = useMemo(() => new Set(report.shots.map((s) => s.sessionId)), [report]);
  const biasLimit = report.tests.find((t) => t.name === "bias")?.limit ?? sensor.toleranceMm;
  const period = query.from || query.to ? `${query.from ?? "first shot"} to ${query.to ?? "last shot"}` : "all dates";
  const last = signOffs[0];
  return (
    <article className="print-page print-paper mx-auto space-y-5" data-testid="print-report">
      <style>{pageCss(`Range verification report · ${sensor.label} · serial ${sensor.serial}`)}</style>
      <div className="no-print flex flex-wrap gap-2">
        <button type="button" className="btn" onClick={() => window.print()}>
          Print or save as PDF
        </button>
        <a href={`/review/sensors/${sensor.id}`} className="btn-secondary">
          Back to the report
        </a>
      </div>
      <header className="border-b-4 border-fg pb-3">
        <p className="text-base font-bold uppercase tracking-wide">Range verification report</p>
        <h1 className="text-3xl font-bold">
          {sensor.label} <span className="font-normal">· serial {sensor.serial}</span>
        </h1>
        <p>
          {sensor.kind === "cw" ? "Continuous-wave (phase)" : "Pulsed"} sensor, {sensor.wavelengthNm} nm · tolerance ±({sensor.toleranceMm} mm + {sensor.tolerancePpm} ppm × D), coverage factor k ={" "}
          {report.rule.coverageK}
          {sensor.calibrationDue ? ` · calibration due ${sensor.calibrationDue}` : ""}
          {sensor.laserClass ? ` · laser class ${sensor.laserClass} (IEC 60825-1)` : " · laser class not recorded"}
        </p>
        <p>
          Project: {project ? `${project.name}${project.client ? ` (client: ${project.client})` : ""}` : "all projects"} · period: {period} · sessions: {used.size} of {sessions.length}
        </p>
        <p className="text-sm" data-testid="print-generated">
          Generated <LocalTime iso={generatedAt} /> by {by}
        </p>
      </header>

      <section className="space-y-2">
        <h2 className="text-xl font-bold">Verdict</h2>
        <VerdictHeadline report={report} />
        <StatementPanel report={report} />
      </section>

      <section className="space-y-2">
        <h2 className="text-xl font-bold">Acceptance rule and tests</h2>
        <p>
          Rule: at least {report.rule.minShots} included shots; at least {report.rule.minWithinPct} % of shots within k × tolerance; |bias| at most the tolerance's constant part; SD at most
          σ·√(χ²₀.₉₅(ν)/ν) with σ the tolerance at the mean distance (adapted from ISO 17123-4, reflector EDM; no conformance claimed); reference RMS uncertainty at most the tolerance at the mean
          distance ÷ {report.rule.referenceRatio} ({report.rule.referenceInVerdict ? "in the verdict" : "advisory"}).
        </p>
        <TestsTable tests={report.tests} referenceInVerdict={report.rule.referenceInVerdict} />
      </section>

      <section className="space-y-2" data-testid="print-traceability">
        <h2 className="text-xl font-bold">Traceability (calibration certificates)</h2>
        <TraceabilityPanel
          rows={report.traceability}
          sessionLabel={(id) => {
            const s = sessions.find((x) => x.id === id);
            return s ? dateTime(s.startedAt) : id;
          }}
        />
      </section>

      <section className="space-y-2">
        <h2 className="text-xl font-bold">Figures (mm unless stated)</h2>
        <FiguresGrid report={report} />
        <p className="text-sm">
          {report.statement === "nssda95"
            ? "95 % accuracy = 1.96 × RMSE (NSSDA), valid for near-normal, near-unbiased errors. "
            : "RMSE-only reporting (ASPRS Edition 2); the reference's uncertainty is added in quadrature where known. "}
          Range error = sensor range − reference distance; positive reads long.
        </p>
        {report.airDefaulted.length ? <p className="text-sm">{report.airDefaulted.length} session(s) used default air values for a missing reading.</p> : null}
      </section>

      <section className="keep space-y-2">
        <h2 className="text-xl font-bold">Range error against reference distance</h2>
        <ErrorVsDistanceChart report={report} legendBeside />
      </section>
      <section className="keep space-y-2">
        <h2 className="text-xl font-bold">Bias by reflectance × illuminance</h2>
        {cells.length ? <MatrixChart cells={cells} worst={worst} legendBeside /> : <p>No shots with both reflectance and illuminance recorded.</p>}
      </section>
      <section className="keep space-y-2">
        <h2 className="text-xl font-bold">Bias per session</h2>
        {report.drift.length ? <DriftChart drift={report.drift} biasLimitMm={biasLimit} legendBeside /> : <p>No sessions.</p>}
      </section>

      <section className="grid gap-4">
        <BandTable title="By reflectance" rows={report.byReflectance} />
        <BandTable title="By illuminance" rows={report.byIlluminance} />
        <BandTable title="By range band" rows={report.byRange} />
      </section>
      <section>
        <CoverageNote coverage={report.coverage} />
      </section>

      <section className="space-y-1" data-testid="print-exclusions">
        <h2 className="text-xl font-bold">Excluded shots ({exclusions.length})</h2>
        {exclusions.length === 0 ? (
          <p>No shot was left out.</p>
        ) : (
          <ul className="list-disc pl-6">
            {exclusions.map((x) => (
              <li key={x.id} className="num">
                <LocalTime iso={x.takenAt} />, {x.referenceM.toFixed(3)} m, error {mmSigned(x.errorMm, 2)}: {x.reason || "no reason recorded"}
              </li>
            ))}
          </ul>
        )}
      </section>

      <section className="space-y-1">
        <h2 className="text-xl font-bold">Sign-off</h2>
        {last ? (
          <p data-testid="print-signoff">
            {last.decision === "approved" ? "✓ Approved" : "✗ Rejected"} on <LocalTime iso={last.createdAt} /> by {last.byName}; verdict then <VerdictBadge verdict={last.verdict} />, bias{" "}
            {mmSigned(last.biasMm, 2)}
            {last.periodFrom || last.periodTo ? `, period ${last.periodFrom ?? "start"} to ${last.periodTo ?? "end"}` : ""}.{last.note ? ` Note: ${last.note}` : ""}
          </p>
        ) : (
          <p>Not signed off yet.</p>
        )}
        <div className="mt-4 grid grid-cols-2 gap-8 pt-8">
          <p className="border-t-2 border-fg pt-1">Responsible surveyor (name, licence, signature)</p>
          <p className="border-t-2 border-fg pt-1">Date</p>
        </div>
      </section>

      <section className="border-t-2 border-fg pt-2 text-sm" data-testid="cautions">
        <h2 className="text-base font-bold">Cautions</h2>
        <p>
          {sensor.laserClass ? <strong data-testid="print-laser-class">{laserCaution(sensor.laserClass)} </strong> : null}
          Lasers in these sensors carry a laser safety class (IEC 60825-1): follow the class's rules and the maker's manual, never aim at people, vehicles or aircraft, and set out traffic control when
          targets stand by a road. Shotbook checks range performance; it is no calibration certificate. Acceptance for a contract follows the client's specification and local survey regulations,
          signed by the responsible licensed surveyor where the law requires one.
        </p>
      </section>
    </article>
  );
}
