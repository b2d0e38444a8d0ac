// The coverage checklist: which range band × reflectance cells and which light the session
// still lacks, before the crew leaves the site. Guidance only; never part of the verdict.
import { Link } from "react-router";
import type { Route } from "./+types/field.coverage";
import { FieldLoading } from "~/components/field/chrome";
import { contextOf, loadSession, sessionCoverage } from "~/components/field/session-data";
import { SessionHeader, SessionMissing } from "~/components/field/session-header";
import { VerdictShape } from "~/components/verdict-badge";
import { useLiveQuery } from "~/offline/live";
import { ReshootNotice } from "~/components/field/reshoot-notice";

export const meta: Route.MetaFunction = () => [{ title: "Coverage checklist — Shotbook field" }];

export async function clientLoader({ params }: Route.ClientLoaderArgs) {
  return loadSession(params.sessionId);
}
clientLoader.hydrate = true as const;

export function HydrateFallback() {
  return <FieldLoading />;
}

const LIGHT = { low: "Low (< 10 klux)", moderate: "Moderate (10–50 klux)", high: "High (≥ 50 klux)" } as const;

export default function FieldCoverage({ loaderData, params }: Route.ComponentProps) {
  const data = useLiveQuery(() => loadSession(params.sessionId), [params.sessionId], loaderData);
  if (!data.session) return <SessionMissing />;
  const ctx = contextOf(data.session, data.reference);
  const { labels, result, light, siteCells, missingHere, outOfReach } = sessionCoverage(data, ctx);
  const siteCell = (band: string, refl: "dark" | "bright") => siteCells.find((c) => c.rangeBand === band && c.reflectance === refl);
  const bandWord = (b: string) => `${b.replace("-", "–")} m`;
  const sensor = ctx.sensor;
  const cell = (band: string, refl: "dark" | "bright") => result?.cells.find((c) => c.rangeBand === band && c.reflectance === refl);

  return (
    <div className="space-y-6">
      <div className="flex flex-wrap items-end justify-between gap-4">
        <SessionHeader data={data} />
        <Link to={`/field/session/${data.session.id}`} className="btn">
          Log shot
        </Link>
      </div>
      <h2 className="text-2xl font-bold">Coverage checklist</h2>
      <ReshootNotice reference={data.reference} sensorId={data.session.record.sensorId} siteId={data.session.record.siteId} />
      {!result ? (
        <p className="field-error">The sensor of this session is not in the tablet's reference data; connect once to copy it.</p>
      ) : (
        <>
          <p
            className={`flex items-center gap-2 text-xl font-bold ${result.complete || (missingHere.length === 0 && !result.needsBrightSun) ? "text-pass" : "text-warn"}`}
            data-testid="coverage-summary"
          >
            <VerdictShape verdict={result.complete || (missingHere.length === 0 && !result.needsBrightSun) ? "pass" : "insufficient"} size={22} />
            {result.complete
              ? "Coverage complete: every range band has dark and bright shots, and the light is covered."
              : missingHere.length === 0 && !result.needsBrightSun
                ? "Everything this site can give is covered."
                : `Still missing: ${missingHere.length} ${missingHere.length === 1 ? "cell" : "cells"} this site can fill${result.needsBrightSun ? " and a shot in bright sun" : ""}.`}
          </p>
          {outOfReach.length ? (
            <p className="text-lg" data-testid="coverage-out-of-reach">
              Out of this site's reach (no target there): {outOfReach.map((c) => `${bandWord(c.rangeBand)} ${c.reflectance}`).join(", ")}. Another site has to cover{" "}
              {outOfReach.length === 1 ? "it" : "them"}.
            </p>
          ) : null}
          {missingHere.length ? (
            <section className="card space-y-2" aria-labelledby="next-title">
              <h3 id="next-title" className="text-xl font-bold">
                Next targets to shoot
              </h3>
              <ul className="num list-disc space-y-1 pl-6 text-lg" data-testid="next-targets">
                {missingHere.map((c) => (
                  <li key={`${c.rangeBand}-${c.reflectance}`}>
                    <strong>
                      {siteCell(c.rangeBand, c.reflectance)!
                        .targets.map((t) => `${t.label} (${t.referenceM} m, ${t.reflectancePct} %)`)
                        .join(" or ")}
                    </strong>
                    : {c.need - c.have} more for {bandWord(c.rangeBand)} {c.reflectance}
                  </li>
                ))}
              </ul>
            </section>
          ) : null}
          <div className="overflow-x-auto">
            <table className="w-full border-collapse text-left text-lg" data-testid="coverage-table">
              <caption className="text-left text-muted">Each cell needs {result.cells[0]?.need ?? 3} shots. Dark: reflectance under 20 %; bright: over 60 % (retro-reflectors do not count).</caption>
              <thead>
                <tr className="border-b-2 border-line">
                  <th scope="col" className="p-2">
                    Range band (m)
                  </th>
                  <th scope="col" className="p-2">
                    Dark targets
                  </th>
                  <th scope="col" className="p-2">
                    Bright targets
                  </th>
                  <th scope="col" className="p-2">
                    Light of the shots
                  </th>
                </tr>
              </thead>
              <tbody>
                {labels.map((band, i) => (
                  <tr key={band} className="border-b border-line">
                    <th scope="row" className="num p-2">
                      {band.replace("-", "–")} m
                    </th>
                    {(["dark", "bright"] as const).map((refl) => {
                      const c = cell(band, refl)!;
                      const ok = c.have >= c.need;
                      const reachable = (siteCell(band, refl)?.targets.length ?? 0) > 0;
                      return (
                        <td key={refl} className="p-2" data-testid={`cell-${band}-${refl}`} data-reachable={reachable}>
                          {!ok && !reachable ? (
                            <span className="num text-muted">
                              {c.have} of {c.need} · no such target at this site
                            </span>
                          ) : (
                            <span className={`inline-flex items-center gap-2 font-bold ${ok ? "text-pass" : "text-warn"}`}>
                              <VerdictShape verdict={ok ? "pass" : "insufficient"} />
                              <span className="num">
                                {c.have} of {c.need}
                              </span>
                              <span>{ok ? "done" : `need ${c.need - c.have} more`}</span>
                            </span>
                          )}
                        </td>
                      );
                    })}
                    <td className="num p-2 text-base">{(["low", "moderate", "high"] as const).map((k) => `${LIGHT[k].split(" ")[0]} ${light[i]![k]}`).join(" · ")}</td>
                  </tr>
                ))}
              </tbody>
            </table>
          </div>
          {sensor?.outdoor ? (
            <p className={`flex items-center gap-2 text-lg font-bold ${result.needsBrightSun ? "text-warn" : "text-pass"}`}>
              <VerdictShape verdict={result.needsBrightSun ? "insufficient" : "pass"} />
              {result.needsBrightSun ? "Outdoor sensor: no shot in bright sun (≥ 50 klux) yet." : "Bright sun (≥ 50 klux) covered."}
            </p>
          ) : null}
        </>
      )}
    </div>
  );
}
