// /review/projects/:projectId/report: the project verification report the client receives
// (issue 14). A numbered document: the current version (stored anew whenever its content
// changed) or, with ?version=N, a stored one exactly as it was, each with its number, version
// and SHA-256 printed on it. Members of the project (any role) and admins; anyone else 404.
import { Link } from "react-router";
import type { Route } from "./+types/review.projects.$projectId.report";
import { ALL } from "~/auth/access";
import { requireRole } from "~/auth/guards.server";
import { currentProjectReport, listProjectReportVersions, projectReportVersion } from "~/models/project-report.server";
import { accuracyStatement, laserCaution, ruleInWords } from "~/domain";

import { mm, mmSigned, num } from "~/components/review/format";
import { LocalTime } from "~/components/review/local-time";
import { VerdictBadge } from "~/components/verdict-badge";

import { printSheetCss } from "~/components/review/print-sheet";
import { ProjectSensorSection } from "~/components/review/project-sensor-section";

export const meta: Route.MetaFunction = ({ data }) => [{ title: data ? `${data.shown.number} — ${data.shown.content.project.name} — verification report` : "Project verification report" }];

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireRole(request, ALL);
  const raw = new URL(request.url).searchParams.get("version");
  const current = await currentProjectReport(user, params.projectId);
  if (!current) throw new Response("There is no project with this id.", { status: 404 });
  let shown = current;
  if (raw !== null) {
    const v = /^[1-9]\d{0,8}$/.test(raw) ? await projectReportVersion(user, params.projectId, Number(raw)) : null;
    if (!v) throw new Response(`There is no version ${raw} of this report.`, { status: 404 });
    shown = v;
  }
  const versions = (await listProjectReportVersions(user, params.projectId)) ?? [];
  // the text stays on the server: the page needs the parsed content only
  const { text: _text, ...rest } = shown;
  return { shown: rest, latest: current.version, versions, isAdmin: user.role === "admin" };
}

/** The shared sheet (print-sheet.ts) with this document's own rules. */
const pageCss = (footer: string) =>
  printSheetCss(footer, {
    screen: `.print-paper .hash { font-family: ui-monospace, "DejaVu Sans Mono", monospace; overflow-wrap: anywhere; }`,
    print: `  .print-page h2 { font-size: 14pt; break-after: avoid; }
  .print-page h3 { font-size: 12pt; break-after: avoid; }
  .print-page figure, .print-page tr, .print-page dl > div, .print-page li, .print-page .keep { break-inside: avoid; }
  .print-page.space-y-6 > :not(:last-child) { margin-bottom: 1rem; }`,
  });

export default function ProjectReport({ loaderData }: Route.ComponentProps) {
  const { shown, latest, versions } = loaderData;
  const c = shown.content;
  const rule = c.rule;
  const sessionLabel = (id: string) => {
    const s = c.sessions.find((x) => x.id === id);
    return s ? `${s.startedAt.slice(0, 16).replace("T", " ")} (${s.sensorLabel})` : id;
  };
  const active = c.exclusions.filter((e) => !e.restoredAt);
  const restored = c.exclusions.filter((e) => e.restoredAt);
  const base = `/api/projects/${c.project.id}`;
  const shortHash = shown.sha256.slice(0, 16);
  const styleWords = rule.statement === "nssda95" ? "NSSDA 95 % accuracy (1.96 × RMSE, FGDC-STD-007.3-1998)" : "RMSE only, reference included where known (ASPRS Edition 2, 2023)";
  const laserClasses = [...new Set(c.sensors.map((s) => s.laserClass).filter((x): x is string => !!x))];
  return (
    <div className="space-y-4">
      <style>{pageCss(`Project verification report ${shown.number} · SHA-256 ${shortHash}… · ${c.project.name}`)}</style>
      <nav className="no-print mx-auto flex max-w-[186mm] flex-wrap gap-2" aria-label="Report actions">
        <button type="button" className="btn" onClick={() => window.print()}>
          Print or save as PDF
        </button>
        <a className="btn-secondary" href={`${base}/bundle.zip`} download data-testid="download-bundle">
          Download CSV bundle with photos (.zip)
        </a>
        <a className="btn-secondary" href={`${base}/shots.geojson?download=1`} download data-testid="download-geojson">
          Download GeoJSON
        </a>
        <Link to="/review" className="btn-secondary">
          Back to the overview
        </Link>
      </nav>
      <article className="print-page print-paper mx-auto space-y-6" data-testid="project-report" data-version={shown.version} data-sha256={shown.sha256} data-statement={rule.statement}>
        <style>{pageCss(`Project verification report ${shown.number} · SHA-256 ${shortHash}… · ${c.project.name}`)}</style>

        {shown.version !== latest ? (
          <p role="status" className="rounded-lg border-4 border-warn p-3 font-bold" data-testid="superseded">
            ⚠ Superseded: this is version {shown.version}; the current version is {latest}.{" "}
            <Link className="no-print underline underline-offset-4" to={`/review/projects/${c.project.id}/report`}>
              Open the current version
            </Link>
          </p>
        ) : null}

        <header className="border-b-4 border-fg pb-3">
          <p className="text-base font-bold uppercase tracking-wide">Project verification report</p>
          <h1 className="text-3xl font-bold">{c.project.name}</h1>
          <p>
            {c.project.client ? (
              <>
                Client: <strong>{c.project.client}</strong> ·{" "}
              </>
            ) : null}
            {c.period ? (
              <>
                Sessions from {c.period.first} to {c.period.last}
              </>
            ) : (
              "No sessions yet"
            )}{" "}
            · {c.sensors.length} sensor{c.sensors.length === 1 ? "" : "s"} · {c.totals.shots} check-shot{c.totals.shots === 1 ? "" : "s"}
            {c.totals.excluded ? ` (${c.totals.excluded} excluded)` : ""}
            {c.project.retired ? " · project retired" : ""}
          </p>
          <dl className="mt-2 grid grid-cols-[max-content_1fr] gap-x-4 gap-y-0.5" data-testid="document-id">
            <dt className="font-bold">Document</dt>
            <dd className="num" data-testid="document-number">
              {shown.number}
            </dd>
            <dt className="font-bold">Version</dt>
            <dd className="num">
              {shown.version} of {latest}, issued <LocalTime iso={shown.createdAt} /> (first opened by {shown.createdBy})
            </dd>
            <dt className="font-bold">SHA-256</dt>
            <dd className="hash text-[13px] leading-6" data-testid="document-hash">
              {shown.sha256}
            </dd>
          </dl>
          <p className="mt-1 text-sm">
            The SHA-256 is of the report's content as canonical JSON (RFC 8785), as returned by GET {base}/report?version={shown.version}; any change of the content makes a new version.
          </p>
        </header>

        <section className="keep space-y-2" data-testid="project-statement">
          <h2 className="text-xl font-bold">Accuracy statement</h2>
          <p className="text-sm">Stated as {styleWords}, per the project's acceptance rule.</p>
          <table className="w-full border-collapse text-left">
            <caption className="sr-only">Verdict and accuracy per sensor</caption>
            <thead>
              <tr className="border-b-2 border-line">
                <th scope="col" className="w-[26%] py-1 pr-2">
                  Sensor
                </th>
                <th scope="col" className="py-1 pr-2">
                  Verdict
                </th>
                <th scope="col" className="whitespace-nowrap py-1 pr-2 text-right">
                  {rule.statement === "nssda95" ? "95 % accuracy" : "RMSE"}
                </th>
                <th scope="col" className="py-1">
                  Statement
                </th>
              </tr>
            </thead>
            <tbody>
              {c.sensors.map((s) => {
                const st = s.figures ? accuracyStatement(s.figures, s.figures.statement) : null;
                return (
                  <tr key={s.id} className="border-b border-line align-top" data-sensor={s.id}>
                    <th scope="row" className="py-1 pr-2 text-left">
                      {s.label}
                      <span className="block text-sm font-normal">serial {s.serial}</span>
                    </th>
                    <td className="whitespace-nowrap py-1 pr-2">
                      <VerdictBadge verdict={s.verdict} />
                    </td>
                    <td className="num whitespace-nowrap py-1 pr-2 text-right">
                      <strong data-headline={st?.headline}>{mm(st?.headlineMm ?? null, 1)}</strong>
                    </td>
                    <td className="py-1" data-testid="statement-line">
                      {s.statementSentence}
                    </td>
                  </tr>
                );
              })}
              {c.sensors.length === 0 ? (
                <tr>
                  <td colSpan={4} className="py-2">
                    No sensor is linked to this project yet.
                  </td>
                </tr>
              ) : null}
            </tbody>
          </table>
        </section>

        <section className="keep space-y-1" data-testid="rule-words">
          <h2 className="text-xl font-bold">Acceptance rule</h2>
          <ul className="list-disc space-y-0.5 pl-6">
            {ruleInWords(rule).map((l) => (
              <li key={l}>{l}</li>
            ))}
          </ul>
        </section>

        <section className="space-y-2" data-testid="sessions">
          <h2 className="text-xl font-bold">Sites, sessions and dates</h2>
          <p>Sites: {c.sites.length ? c.sites.map((s) => `${s.name}${s.lat != null && s.lon != null ? ` (${num(s.lat, 5)}°, ${num(s.lon, 5)}°)` : ""}`).join("; ") : "none"}.</p>
          {c.sessions.length ? (
            <table className="w-full border-collapse text-left text-sm">
              <caption className="sr-only">Sessions</caption>
              <thead>
                <tr className="border-b-2 border-line">
                  <th scope="col" className="py-1 pr-2">
                    Started (as recorded)
                  </th>
                  <th scope="col" className="py-1 pr-2">
                    Sensor
                  </th>
                  <th scope="col" className="py-1 pr-2">
                    Site
                  </th>
                  <th scope="col" className="py-1 pr-2 text-right">
                    Shots
                  </th>
                  <th scope="col" className="py-1 pr-2 text-right">
                    Excluded
                  </th>
                  <th scope="col" className="py-1 pr-2">
                    Air (°C, hPa, %)
                  </th>
                  <th scope="col" className="py-1">
                    Crew
                  </th>
                </tr>
              </thead>
              <tbody>
                {c.sessions.map((s) => (
                  <tr key={s.id} className="border-b border-line num">
                    <td className="py-1 pr-2">
                      {s.startedAt.slice(0, 16).replace("T", " ")} {s.startedAt.slice(19).replace(/^\.\d+/, "") || ""}
                    </td>
                    <td className="py-1 pr-2">{s.sensorLabel}</td>
                    <td className="py-1 pr-2">{s.siteName}</td>
                    <td className="py-1 pr-2 text-right">{s.shots}</td>
                    <td className="py-1 pr-2 text-right">{s.excluded}</td>
                    <td className="py-1 pr-2">
                      {s.airTempC == null && s.pressureHpa == null && s.humidityPct == null ? "defaults" : `${num(s.airTempC, 1)}, ${num(s.pressureHpa, 1)}, ${num(s.humidityPct, 0)}`}
                    </td>
                    <td className="py-1">{s.crew}</td>
                  </tr>
                ))}
              </tbody>
            </table>
          ) : (
            <p>No sessions on this project yet.</p>
          )}
        </section>

        {c.sensors.map((s) => (
          <ProjectSensorSection key={s.id} s={s} rule={rule} sessionLabel={sessionLabel} />
        ))}

        <section className="space-y-1 border-t-4 border-fg pt-3" data-testid="exclusions">
          <h2 className="text-xl font-bold">Excluded shots ({active.length})</h2>
          {active.length === 0 ? (
            <p>No shot is left out.</p>
          ) : (
            <ul className="list-disc pl-6">
              {active.map((x) => (
                <li key={`${x.shotId}-${x.at}`} className="num">
                  {x.sensorLabel}, shot of <LocalTime iso={x.takenAt} /> at {num(x.referenceM, 3)} m, error {mmSigned(x.errorMm, 2)}: “{x.reason}” — excluded by {x.by} on <LocalTime iso={x.at} />
                </li>
              ))}
            </ul>
          )}
          {restored.length ? (
            <>
              <h3 className="text-lg font-bold">Exclusions later restored ({restored.length})</h3>
              <ul className="list-disc pl-6">
                {restored.map((x) => (
                  <li key={`${x.shotId}-${x.at}`} className="num">
                    {x.sensorLabel}, shot of <LocalTime iso={x.takenAt} />: excluded by {x.by} on <LocalTime iso={x.at} /> (“{x.reason}”), restored by {x.restoredBy ?? "—"} on{" "}
                    <LocalTime iso={x.restoredAt} />
                    {x.restoreReason ? ` (“${x.restoreReason}”)` : ""}
                  </li>
                ))}
              </ul>
            </>
          ) : null}
        </section>

        <section className="keep space-y-1" data-testid="signoffs">
          <h2 className="text-xl font-bold">Sign-offs</h2>
          {c.signOffs.length === 0 ? (
            <p>No sensor of this project is signed off yet.</p>
          ) : (
            <ul className="space-y-1">
              {c.signOffs.map((s) => (
                <li key={s.id} data-testid="signoff-line">
                  <strong>{s.sensorLabel}</strong>: {s.decision === "approved" ? "✓ Approved" : "✗ Rejected"} by {s.by} on <LocalTime iso={s.at} />; verdict then <VerdictBadge verdict={s.verdict} />,
                  bias {mmSigned(s.biasMm, 2)}
                  {s.periodFrom || s.periodTo ? `, period ${s.periodFrom ?? "start"} to ${s.periodTo ?? "end"}` : ""}.{s.note ? ` Note: ${s.note}` : ""}
                </li>
              ))}
            </ul>
          )}
          <div className="mt-4 grid grid-cols-2 gap-8 pt-8">
            <p className="border-t-2 border-fg pt-1">Responsible surveyor (name, licence, signature)</p>
            <p className="border-t-2 border-fg pt-1">Date</p>
          </div>
        </section>

        <section className="keep border-t-2 border-fg pt-2 text-sm" data-testid="cautions">
          <h2 className="text-base font-bold">Cautions</h2>
          {laserClasses.map((k) => (
            <p key={k}>
              <strong>{laserCaution(k)}</strong>
            </p>
          ))}
          <p>
            Lasers in these sensors carry a laser safety class (IEC 60825-1): follow the class's rules and the maker's manual, never aim at people, vehicles or aircraft, and set out traffic control
            when targets stand by a road. Shotbook checks range performance; it is no calibration certificate. Acceptance for a contract follows the client's specification and local survey
            regulations, signed by the responsible licensed surveyor where the law requires one.
          </p>
        </section>

        <section className="keep space-y-1 text-sm" data-testid="versions">
          <h2 className="text-base font-bold">Versions of this document</h2>
          <table className="w-full border-collapse text-left">
            <caption className="sr-only">Versions</caption>
            <thead>
              <tr className="border-b-2 border-line">
                <th scope="col" className="py-1 pr-2">
                  Number
                </th>
                <th scope="col" className="py-1 pr-2">
                  Issued
                </th>
                <th scope="col" className="py-1 pr-2">
                  First opened by
                </th>
                <th scope="col" className="py-1">
                  SHA-256
                </th>
              </tr>
            </thead>
            <tbody>
              {versions.map((v) => (
                <tr key={v.version} className="border-b border-line" data-version={v.version} aria-current={v.version === shown.version ? "page" : undefined}>
                  <td className="py-1 pr-2">
                    {v.version === shown.version ? (
                      <strong>{v.number} (this one)</strong>
                    ) : (
                      <Link className="inline-flex min-h-11 items-center underline underline-offset-4" to={`/review/projects/${c.project.id}/report?version=${v.version}`}>
                        {v.number}
                      </Link>
                    )}
                  </td>
                  <td className="py-1 pr-2">
                    <LocalTime iso={v.createdAt} />
                  </td>
                  <td className="py-1 pr-2">{v.createdBy}</td>
                  <td className="hash py-1">{v.sha256}</td>
                </tr>
              ))}
            </tbody>
          </table>
        </section>
      </article>
    </div>
  );
}
