import { Form, Link, useNavigation } from "react-router";
import { reportProjects } from "~/models/project-report.server";
import type { Route } from "./+types/review";
import { ALL } from "~/auth/access";
import { requireRole } from "~/auth/guards.server";
import { answering } from "~/http/app-error.server";
import { listProjectsForFilter, reviewOverview } from "~/models/review.server";
import { VerdictBadge } from "~/components/verdict-badge";
import { BiasTrace } from "~/components/review/sparkline";
import { dateOnly, mm, mmSigned, TEST_WORDS } from "~/components/review/format";
import { LocalTime } from "~/components/review/local-time";
import type { TestName } from "~/components/review/types";

export const meta: Route.MetaFunction = () => [{ title: "Review — sensor verdicts · Shotbook" }];

const DATE = /^\d{4}-\d{2}-\d{2}$/;
const WORST_WORDS: Record<string, string> = {
  dark: "dark",
  mid: "mid-grey",
  bright: "bright",
  retro: "retro-reflective",
  low: "shade (< 10 klux)",
  moderate: "daylight (10–50 klux)",
  high: "bright sun (≥ 50 klux)",
};

export function parseFilters(url: URL) {
  const d = (k: string) => {
    const v = url.searchParams.get(k)?.trim() ?? "";
    return DATE.test(v) ? v : null;
  };
  const project = url.searchParams.get("project")?.trim() || null;
  return { projectId: project, from: d("from"), to: d("to") };
}

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireRole(request, ALL);
  const filters = parseFilters(new URL(request.url));
  const [rows, projects, reportList] = await answering(() => Promise.all([reviewOverview(user, filters), listProjectsForFilter(user), reportProjects(user)]));
  return { rows, projects, reportList, filters, canImport: user.role !== "viewer", today: new Date().toISOString().slice(0, 10) };
}

export default function ReviewOverview({ loaderData }: Route.ComponentProps) {
  const { rows, projects, reportList, filters, canImport, today } = loaderData;
  const nav = useNavigation();
  const failing = rows.filter((r) => r.verdict === "fail").length;
  const qs = new URLSearchParams();
  if (filters.from) qs.set("from", filters.from);
  if (filters.to) qs.set("to", filters.to);
  if (filters.projectId) qs.set("project", filters.projectId);
  const suffix = qs.size ? `?${qs}` : "";
  return (
    <div className="space-y-5">
      <div className="flex flex-wrap items-center justify-between gap-3">
        <h1 className="text-3xl font-bold">Sensor verdicts</h1>
        {canImport ? (
          <Link to="/review/import" className="btn-secondary">
            Import a sensor's CSV
          </Link>
        ) : null}
        {canImport ? (
          <Link to="/review/scans" className="btn-secondary">
            Check-shots from a scan
          </Link>
        ) : null}
        {canImport ? (
          <Link to="/review/frames" className="btn-secondary">
            Check-shots from depth frames
          </Link>
        ) : null}
      </div>
      {/* issue 14: what the client receives, per project */}
      {reportList.length ? (
        <section className="space-y-2" data-testid="project-reports">
          <h2 className="text-xl font-bold">Project verification reports</h2>
          <ul className="flex flex-wrap gap-2">
            {reportList.map((p) => (
              <li key={p.id}>
                <Link to={`/review/projects/${p.id}/report`} className="btn-secondary">
                  {p.name}
                  {p.client ? ` — ${p.client}` : ""}
                </Link>
              </li>
            ))}
          </ul>
        </section>
      ) : null}
      <Form method="get" className="card flex flex-wrap items-end gap-4" aria-label="Filters">
        <div>
          <label htmlFor="f-project" className="field-label">
            Project
          </label>
          <select id="f-project" name="project" className="input" defaultValue={filters.projectId ?? ""}>
            <option value="">All projects</option>
            {projects.map((p) => (
              <option key={p.id} value={p.id}>
                {p.name}
                {p.client ? ` — ${p.client}` : ""}
              </option>
            ))}
          </select>
        </div>
        <div>
          <label htmlFor="f-from" className="field-label">
            From (date)
          </label>
          <input id="f-from" name="from" type="date" className="input" defaultValue={filters.from ?? ""} />
        </div>
        <div>
          <label htmlFor="f-to" className="field-label">
            To (date, whole day)
          </label>
          <input id="f-to" name="to" type="date" className="input" defaultValue={filters.to ?? ""} />
        </div>
        <button type="submit" className="btn">
          {nav.state === "loading" ? "Loading…" : "Apply"}
        </button>
        {qs.size ? (
          <Link to="/review" className="btn-secondary">
            Clear
          </Link>
        ) : null}
      </Form>
      <p className="text-lg" aria-live="polite">
        {rows.length === 0 ? "No sensors match these filters." : `${rows.length} sensor${rows.length === 1 ? "" : "s"}; ${failing ? `${failing} failing — listed first.` : "none failing."}`}
      </p>
      {rows.length ? (
        <div className="overflow-x-auto">
          <table className="w-full border-collapse text-left" data-testid="sensor-overview">
            <caption className="sr-only">Sensors with their verdicts</caption>
            <thead>
              <tr className="border-b-2 border-line">
                <th scope="col" className="py-2 pr-3">
                  Sensor
                </th>
                <th scope="col" className="py-2 pr-3">
                  Verdict
                </th>
                <th scope="col" className="py-2 pr-3 text-right">
                  n
                </th>
                <th scope="col" className="py-2 pr-3 text-right">
                  Bias
                </th>
                <th scope="col" className="py-2 pr-3 text-right">
                  Accuracy
                </th>
                <th scope="col" className="py-2 pr-3">
                  Bias per session
                </th>
                <th scope="col" className="py-2 pr-3">
                  Last check
                </th>
                <th scope="col" className="py-2 pr-3">
                  Calibration due
                </th>
                <th scope="col" className="py-2">
                  Sign-off
                </th>
              </tr>
            </thead>
            <tbody>
              {rows.map((r) => {
                const overdue = r.calibrationDue != null && r.calibrationDue < today;
                return (
                  <tr key={r.id} className="border-b border-line num align-top" data-sensor={r.id} data-verdict={r.verdict}>
                    <th scope="row" className="py-2 pr-3 text-left">
                      <Link to={`/review/sensors/${r.id}${suffix}`} className="inline-flex min-h-11 flex-col justify-center font-bold underline underline-offset-4">
                        {r.label}
                      </Link>
                      <span className="block text-sm font-normal text-muted">
                        {r.serial} · {r.kind === "cw" ? "continuous-wave" : "pulsed"} · ±({r.toleranceMm} mm + {r.tolerancePpm} ppm)
                      </span>
                    </th>
                    <td className="min-w-[16rem] py-2 pr-3">
                      <VerdictBadge verdict={r.verdict} />
                      {r.verdict === "fail" ? (
                        <span className="block text-sm">on {r.failed.map((f) => TEST_WORDS[f as TestName]?.title.toLowerCase().replace("(sd)", "(SD)") ?? f).join(", ")}</span>
                      ) : null}
                      {r.why ? (
                        <span className="mt-1 block text-sm font-bold" data-testid="why-flagged">
                          ⚑ {r.why}
                        </span>
                      ) : null}
                      {r.worst ? (
                        <span className="block text-sm" data-testid="worst">
                          worst: <strong>{WORST_WORDS[r.worst.reflectance]}</strong> targets in <strong>{WORST_WORDS[r.worst.illuminance]}</strong>, {mmSigned(r.worst.biasMm, 1)} (n {r.worst.n})
                        </span>
                      ) : null}
                    </td>
                    <td className="py-2 pr-3 text-right">
                      {r.n}
                      {r.excluded ? <span className="block text-sm text-muted">{r.excluded} excl.</span> : null}
                    </td>
                    <td className="py-2 pr-3 text-right">{mmSigned(r.biasMm, 2)}</td>
                    <td className="py-2 pr-3 text-right" data-testid="overview-headline" data-statement={r.statement}>
                      {mm(r.headlineMm, 2)}
                      <span className="block text-sm text-muted">{r.headlineLabel}</span>
                      {r.expiredCertificates ? <span className="block text-sm font-bold text-fail">⚠ certificate past due</span> : null}
                    </td>
                    <td className="py-2 pr-3">
                      <BiasTrace points={r.trace} limitMm={r.toleranceMm} />
                    </td>
                    <td className="py-2 pr-3">
                      <LocalTime iso={r.lastShotAt} />
                    </td>
                    <td className="py-2 pr-3">
                      {r.calibrationDue ? (
                        overdue ? (
                          <span className="font-bold text-warn">⚠ overdue {r.calibrationDue}</span>
                        ) : (
                          dateOnly(r.calibrationDue)
                        )
                      ) : (
                        <span className="text-muted">not set</span>
                      )}
                    </td>
                    <td className="py-2">
                      {r.lastSignOff ? (
                        <span>
                          <span className="font-bold">{r.lastSignOff.decision === "approved" ? "✓ Approved" : "✗ Rejected"}</span>
                          <span className="block text-sm text-muted">
                            <LocalTime iso={r.lastSignOff.createdAt} /> by {r.lastSignOff.byName}
                          </span>
                        </span>
                      ) : (
                        <span className="text-muted">none yet</span>
                      )}
                    </td>
                  </tr>
                );
              })}
            </tbody>
          </table>
        </div>
      ) : null}
    </div>
  );
}
