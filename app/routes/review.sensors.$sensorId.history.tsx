// /review/sensors/:sensorId/history (issue 15): one sensor over months — bias and RMSE per
// session, sign-offs, certificates and exclusions — so drift shows before the sensor fails.
import { Link } from "react-router";
import type { Route } from "./+types/review.sensors.$sensorId.history";
import { ALL } from "~/auth/access";
import { requireRole } from "~/auth/guards.server";
import { DriftChart } from "~/components/review/charts";
import { dateOnly, dateTime, mm, mmSigned } from "~/components/review/format";
import { VerdictBadge } from "~/components/verdict-badge";
import { sensorHistory } from "~/models/history.server";

export const meta: Route.MetaFunction = ({ data }) => [{ title: `${data?.sensor.label ?? "Sensor"} — history · Shotbook` }];

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireRole(request, ALL);
  const m = Number(new URL(request.url).searchParams.get("months") ?? "24");
  const months = Number.isInteger(m) && m >= 1 && m <= 120 ? m : 24;
  const h = await sensorHistory(user, params.sensorId, months);
  if (!h) throw new Response("There is no sensor with this id.", { status: 404 });
  return h;
}

export default function SensorHistory({ loaderData }: Route.ComponentProps) {
  const { sensor, months, sessions, signOffs, certificateEvents, exclusions, drift: trend } = loaderData;
  // here the triangles are the sessions of a run moving one way (Nelson's test 3); squares the
  // sessions held while the certificate was past due; the dotted line the least-squares trend
  const inRun = new Set(trend.runIndices);
  const drift = sessions.map((s, i) => ({ sessionId: s.sessionId, startedAt: s.startedAt, n: s.n, biasMm: s.biasMm, flag: inRun.has(i) }));
  const pastDueIds = sessions.filter((s) => s.certificatePastDue).map((s) => s.sessionId);
  const slope = trend.slopeMmPerYear;
  return (
    <div className="space-y-6" data-testid="sensor-history">
      <p>
        <Link to={`/review/sensors/${sensor.id}`} className="inline-flex min-h-11 items-center underline underline-offset-4">
          ← Report of {sensor.label}
        </Link>
      </p>
      <header>
        <h1 className="text-3xl font-bold">{sensor.label} — history</h1>
        <p className="text-muted">
          Serial {sensor.serial} · ±({sensor.toleranceMm} mm + {sensor.tolerancePpm} ppm) · last {months} months ·{" "}
          {[6, 12, 24, 60].map((n) => (
            <Link key={n} to={`?months=${n}`} className={`ml-1 underline underline-offset-4 ${n === months ? "font-bold" : ""}`}>
              {n} mo
            </Link>
          ))}
        </p>
        <p data-testid="history-certificate">
          Certificate: {sensor.certNumber ? `No. ${sensor.certNumber}, ${sensor.certLaboratory ?? ""}, issued ${sensor.certIssued ?? "—"}, due ${sensor.certDue ?? "—"}` : "none recorded"}
        </p>
      </header>

      <section className="card" aria-labelledby="h-drift">
        <h2 id="h-drift" className="mb-2 text-2xl font-bold">
          Bias per session
        </h2>
        {drift.some((d) => d.biasMm != null) ? (
          <>
            <ul className="mb-3 space-y-1" data-testid="history-drift">
              <li>
                <strong>Trend:</strong>{" "}
                {slope == null || trend.df == null ? (
                  <span className="text-muted">needs at least 3 sessions with shots on different dates</span>
                ) : (
                  <>
                    {slope >= 0 ? "+" : "−"}
                    {Math.abs(slope).toFixed(2)} mm per year (± {trend.slopeSeMmPerYear!.toFixed(2)}), t = {trend.t == null ? "—" : trend.t.toFixed(2)} with {trend.df} degrees of freedom:{" "}
                    {trend.trendSignificant ? <strong className="text-fail">⚠ significant drift (|t| above the 97.5 % t quantile)</strong> : "not significant at 95 %"}
                  </>
                )}{" "}
                <span className="text-sm text-muted">(least-squares slope of session bias on time, t test of a zero slope)</span>
              </li>
              <li>
                <strong>Run:</strong>{" "}
                {trend.runIndices.length ? (
                  <strong className="text-fail">
                    ⚠ {trend.runIndices.length} sessions in a row moving {trend.runDirection === "up" ? "up" : "down"}
                  </strong>
                ) : (
                  "no six sessions in a row moving one way"
                )}{" "}
                <span className="text-sm text-muted">(Nelson's test 3: six in a row steadily increasing or decreasing)</span>
              </li>
              {pastDueIds.length ? (
                <li>
                  <strong className="text-fail">
                    ⚠ {pastDueIds.length} session{pastDueIds.length === 1 ? "" : "s"} held with the certificate past due
                  </strong>
                </li>
              ) : null}
            </ul>
            <DriftChart
              drift={drift}
              biasLimitMm={sensor.toleranceMm}
              pastDueIds={pastDueIds}
              trendLine={trend.line}
              flagLegend="drift: in a run of six or more sessions moving one way (Nelson's test 3)"
            />
          </>
        ) : (
          <p className="text-muted">No included shots in this period.</p>
        )}
      </section>

      <section aria-labelledby="h-sessions" className="space-y-2">
        <h2 id="h-sessions" className="text-2xl font-bold">
          Sessions ({sessions.length})
        </h2>
        {sessions.length === 0 ? (
          <p className="text-muted">No sessions in this period.</p>
        ) : (
          <div className="overflow-x-auto">
            <table className="w-full border-collapse text-left" data-testid="history-sessions">
              <thead>
                <tr className="border-b-2 border-line">
                  <th scope="col" className="py-2 pr-3">
                    Started
                  </th>
                  <th scope="col" className="py-2 pr-3">
                    Site
                  </th>
                  <th scope="col" className="py-2 pr-3 text-right">
                    n
                  </th>
                  <th scope="col" className="py-2 pr-3 text-right">
                    Bias
                  </th>
                  <th scope="col" className="py-2 pr-3 text-right">
                    RMSE
                  </th>
                  <th scope="col" className="py-2 pr-3">
                    Drift
                  </th>
                  <th scope="col" className="py-2">
                    Certificate
                  </th>
                </tr>
              </thead>
              <tbody>
                {sessions.map((s, i) => (
                  <tr key={s.sessionId} className="border-b border-line num">
                    <td className="py-2 pr-3 whitespace-nowrap">{dateTime(s.startedAt)}</td>
                    <td className="py-2 pr-3">{s.siteName}</td>
                    <td className="py-2 pr-3 text-right">
                      {s.n}
                      {s.excluded ? <span className="block text-sm text-muted">{s.excluded} excl.</span> : null}
                    </td>
                    <td className={`py-2 pr-3 text-right ${s.biasMm != null && Math.abs(s.biasMm) > sensor.toleranceMm ? "font-bold text-fail" : ""}`}>{mmSigned(s.biasMm, 2)}</td>
                    <td className="py-2 pr-3 text-right">{mm(s.rmseMm, 2)}</td>
                    <td className="py-2 pr-3">{inRun.has(i) ? <strong className="text-warn">▲ in a run {trend.runDirection === "up" ? "up" : "down"}</strong> : ""}</td>
                    <td className="py-2">{s.certificatePastDue ? <strong className="text-fail">⚠ past due</strong> : "valid"}</td>
                  </tr>
                ))}
              </tbody>
            </table>
          </div>
        )}
      </section>

      <div className="grid gap-6 lg:grid-cols-2">
        <section aria-labelledby="h-so" className="card space-y-2">
          <h2 id="h-so" className="text-2xl font-bold">
            Sign-offs
          </h2>
          {signOffs.length === 0 ? (
            <p className="text-muted">None yet.</p>
          ) : (
            <ul className="space-y-1">
              {signOffs.map((s) => (
                <li key={s.id}>
                  {s.decision === "approved" ? "✓ Approved" : "✗ Rejected"} {dateOnly(s.createdAt)} by {s.byName} — verdict <VerdictBadge verdict={s.verdict} />, bias {mmSigned(s.biasMm, 2)}
                </li>
              ))}
            </ul>
          )}
        </section>
        <section aria-labelledby="h-cert" className="card space-y-2">
          <h2 id="h-cert" className="text-2xl font-bold">
            Certificates
          </h2>
          {certificateEvents.length === 0 ? (
            <p className="text-muted">No certificate recorded in the registry's history.</p>
          ) : (
            <ul className="space-y-1">
              {certificateEvents.map((c) => (
                <li key={c.at}>
                  {dateOnly(c.at)}: {c.action === "create" ? "registered with" : "changed to"} certificate {c.number ?? "—"}, due {c.due ?? "—"}
                </li>
              ))}
            </ul>
          )}
        </section>
      </div>

      <section aria-labelledby="h-excl" className="card space-y-2">
        <h2 id="h-excl" className="text-2xl font-bold">
          Exclusions ({exclusions.length})
        </h2>
        {exclusions.length === 0 ? (
          <p className="text-muted">No shot was ever left out.</p>
        ) : (
          <ul className="space-y-1">
            {exclusions.map((x) => (
              <li key={`${x.shotId}-${x.createdAt}`} className="num">
                {dateTime(x.takenAt)}, {x.referenceM.toFixed(3)} m, error {mmSigned(x.errorMm, 2)}: “{x.reason}” by {x.byName} on {dateOnly(x.createdAt)}
                {x.restoredAt ? ` (restored ${dateOnly(x.restoredAt)})` : ""}
              </li>
            ))}
          </ul>
        )}
      </section>
    </div>
  );
}
