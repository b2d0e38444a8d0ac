// issue 15 (ranging.md §7): the accuracy statement the report leads with, in the style of the
// rule (RMSE as in ASPRS Edition 2, or NSSDA 95 %), the reference's own uncertainty, the zero
// offset's significance, and the calibration certificates behind the check (traceability).
import { accuracyStatement } from "~/domain";
import { mm, mmSigned, num } from "./format";
import type { ReportJson, TraceabilityRow } from "./types";

type StatementReport = Pick<
  ReportJson,
  "n" | "rmseMm" | "rmseCombinedMm" | "accuracy95Mm" | "referenceUnknownN" | "referenceRmseMm" | "statement" | "zeroOffsetMm" | "zeroOffsetT" | "zeroOffsetSignificant" | "rule"
>;

export function StatementPanel({ report }: { report: StatementReport }) {
  const st = accuracyStatement(report, report.statement);
  return (
    <div className="rounded-lg border-2 border-line bg-surface p-4" data-testid="accuracy-statement" data-style={st.style} data-headline={st.headline}>
      <p className="text-sm font-bold uppercase tracking-wide text-muted">{st.headlineLabel}</p>
      <p className="num text-3xl font-bold" data-testid="headline-figure">
        {mm(st.headlineMm, 1)}
      </p>
      <p className="mt-1 text-lg" data-testid="statement-sentence">
        {st.sentence}
      </p>
      <ul className="mt-2 space-y-1 text-sm">
        <li data-testid="reference-rmse">
          Reference uncertainty (RMS of u_ref, k = 1):{" "}
          {report.referenceRmseMm != null ? (
            <strong className="num">{mm(report.referenceRmseMm, 2)}</strong>
          ) : (
            <strong>unknown{report.referenceUnknownN ? ` for ${report.referenceUnknownN} shot${report.referenceUnknownN === 1 ? "" : "s"}` : ""}</strong>
          )}
          {report.rmseCombinedMm != null ? (
            <>
              {" "}
              · RMSE with the reference included <strong className="num">{mm(report.rmseCombinedMm, 2)}</strong> (√(RMSE² + reference²), ASPRS Edition 2)
            </>
          ) : null}
        </li>
        <li data-testid="zero-offset-t">
          Zero offset {mmSigned(report.zeroOffsetMm, 2)}
          {report.zeroOffsetT != null ? (
            <>
              , t = {num(report.zeroOffsetT, 2)}: <strong>{report.zeroOffsetSignificant ? "significant at 95 %" : "not significant at 95 %"}</strong>
            </>
          ) : (
            " (needs at least 3 shots at two or more distances)"
          )}{" "}
          <span className="text-muted">— adapted from the zero-point test of ISO 17123-4 (reflector EDM); no conformance claimed.</span>
        </li>
        {report.statement === "rmse" ? null : <li className="text-muted">95 % accuracy = 1.96 × RMSE (NSSDA, FGDC-STD-007.3-1998), valid for near-normal, near-unbiased errors.</li>}
      </ul>
    </div>
  );
}

const KIND_WORDS: Record<TraceabilityRow["kind"], string> = { sensor: "Sensor", tape: "Tape", edm: "Reference EDM" };

/** The certificates behind the report; a session after a certificate's due date is flagged. */
export function TraceabilityPanel({ rows, sessionLabel }: { rows: TraceabilityRow[]; sessionLabel?: (id: string) => string }) {
  const late = rows.filter((r) => r.expiredOnSessions.length > 0);
  return (
    <div data-testid="traceability">
      {late.length ? (
        <p role="alert" className="mb-2 font-bold text-fail" data-testid="traceability-expired">
          ⚠ {late.length} certificate{late.length === 1 ? " was" : "s were"} past due on sessions of this report.
        </p>
      ) : null}
      {rows.length === 0 ? (
        <p className="text-muted">No calibration certificate is recorded for the sensor, tapes or reference EDMs of this selection.</p>
      ) : (
        <table className="w-full border-collapse text-left">
          <caption className="sr-only">Calibration certificates</caption>
          <thead>
            <tr className="border-b-2 border-line">
              <th scope="col" className="py-1 pr-2">
                Instrument
              </th>
              <th scope="col" className="py-1 pr-2">
                Certificate
              </th>
              <th scope="col" className="py-1 pr-2">
                Laboratory
              </th>
              <th scope="col" className="py-1 pr-2">
                Issued
              </th>
              <th scope="col" className="py-1 pr-2">
                Due
              </th>
              <th scope="col" className="py-1">
                Past due on
              </th>
            </tr>
          </thead>
          <tbody>
            {rows.map((r) => (
              <tr key={`${r.kind}-${r.id}`} className="border-b border-line align-top" data-kind={r.kind} data-expired={r.expiredOnSessions.length > 0}>
                <th scope="row" className="py-1 pr-2 text-left font-normal">
                  {KIND_WORDS[r.kind]} <strong>{r.label}</strong>
                </th>
                <td className="py-1 pr-2 whitespace-nowrap">{r.number ?? <span className="text-warn">none recorded</span>}</td>
                <td className="py-1 pr-2">{r.laboratory ?? "—"}</td>
                <td className="py-1 pr-2 num whitespace-nowrap">{r.issued ?? "—"}</td>
                <td className="py-1 pr-2 num whitespace-nowrap">{r.due ?? "—"}</td>
                <td className="py-1">
                  {r.expiredOnSessions.length ? <strong className="text-fail">⚠ {r.expiredOnSessions.map((s) => (sessionLabel ? sessionLabel(s) : s)).join(", ")}</strong> : "—"}
                </td>
              </tr>
            ))}
          </tbody>
        </table>
      )}
    </div>
  );
}
