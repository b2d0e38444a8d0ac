// The figures of a sensor report with their units, and the four acceptance tests as
// value against limit. Pure presentation: the numbers come from the report API.
import { VerdictBadge, VerdictShape } from "~/components/verdict-badge";
import { explainVerdict, type ExplainInput, type IncludedTotals } from "~/domain";
import { bandWord, mm, mmSigned, num, pct, TEST_WORDS, testLimit, testValue } from "./format";
import type { BandRow, ReportJson, ReportTest } from "./types";

export function TestsTable({ tests, referenceInVerdict = false }: { tests: ReportTest[]; referenceInVerdict?: boolean }) {
  return (
    <>
      <table className="w-full border-collapse text-left" data-testid="tests-table">
        <caption className="sr-only">Acceptance tests</caption>
        <thead>
          <tr className="border-b-2 border-line">
            <th scope="col" className="py-2 pr-3">
              Test
            </th>
            <th scope="col" className="py-2 pr-3 text-right">
              Value
            </th>
            <th scope="col" className="py-2 pr-3 text-right">
              Limit
            </th>
            <th scope="col" className="py-2">
              Result
            </th>
          </tr>
        </thead>
        <tbody>
          {tests.map((t) => (
            <tr key={t.name} className="border-b border-line" data-test={t.name} data-pass={t.pass}>
              <th scope="row" className="py-2 pr-3 font-bold">
                {TEST_WORDS[t.name].title}
              </th>
              <td className="py-2 pr-3 text-right num">{testValue(t.name, t.value)}</td>
              <td className="py-2 pr-3 text-right num">
                <span className="text-muted">{TEST_WORDS[t.name].rule}</span> {testLimit(t.name, t.limit)}
              </td>
              <td className="py-2">
                {t.pass === null ? <span className="font-bold text-warn">Unknown</span> : <VerdictBadge verdict={t.pass ? "pass" : "fail"} />}
                {t.name === "reference" ? <span className="block text-sm text-muted">{referenceInVerdict ? "in the verdict" : "advisory"}</span> : null}
              </td>
            </tr>
          ))}
        </tbody>
      </table>
      <p className="mt-1 text-sm text-muted" data-testid="precision-note">
        Precision test adapted from ISO 17123-4 (reflector EDM); no conformance claimed.
      </p>
    </>
  );
}

/** Why the verdict came out so: flagged shots that drive a failed test first, then each failed test (ranging core's explainVerdict). */
/** Explained report: its tests and rule, and either every row or (issue 16) the flagged included rows with the included totals. */
export type Explained = Pick<ReportJson, "tests" | "verdict" | "rule"> & { shots: ExplainInput["shots"] };

export function explanationOf(report: Explained, included?: IncludedTotals) {
  return explainVerdict({ verdict: report.verdict, tests: report.tests, shots: report.shots, coverageK: report.rule.coverageK, included });
}

/** One sentence per failed test, e.g. "Bias +6.20 mm is beyond the limit ±5.00 mm.", after any flagged-shot sentence. */
export function failureSentences(report: Explained): string[] {
  return explanationOf(report).lines;
}

function Figure({ label, value, hint }: { label: string; value: string; hint?: string }) {
  return (
    <div className="rounded-md border-2 border-line bg-bg p-3">
      <dt className="text-sm font-bold text-muted">{label}</dt>
      <dd className="num text-xl font-bold">{value}</dd>
      {hint ? <dd className="text-sm text-muted">{hint}</dd> : null}
    </div>
  );
}

export function FiguresGrid({ report }: { report: Omit<ReportJson, "shots"> }) {
  const ci = report.biasCi95Mm;
  return (
    <dl className="grid grid-cols-2 gap-3 sm:grid-cols-3 lg:grid-cols-4" data-testid="figures">
      <Figure label="Shots used (n)" value={String(report.n)} hint={`${report.excluded} excluded`} />
      <Figure label="Bias" value={mmSigned(report.biasMm, 2)} hint={ci ? `95 % CI ${num(ci[0], 2)} to ${num(ci[1], 2)} mm` : "95 % CI —"} />
      <Figure label="Standard deviation" value={mm(report.sdMm, 2)} />
      <Figure label="RMSE" value={mm(report.rmseMm, 2)} />
      {report.statement === "nssda95" ? <Figure label="95 % accuracy (1.96 × RMSE)" value={mm(report.accuracy95Mm, 2)} hint="valid for near-normal, near-unbiased errors" /> : null}
      <Figure
        label="RMSE, reference included"
        value={mm(report.rmseCombinedMm, 2)}
        hint={report.referenceRmseMm != null ? `reference ${mm(report.referenceRmseMm, 2)} RMS` : `reference unknown for ${report.referenceUnknownN} shots`}
      />
      <Figure label="95th percentile |error|" value={mm(report.p95AbsMm, 2)} />
      <Figure label="Max |error|" value={mm(report.maxAbsMm, 2)} />
      <Figure label="Within limit" value={pct(report.withinPct)} hint={`rule: ≥ ${report.rule.minWithinPct} %`} />
      <Figure label="Zero offset" value={mmSigned(report.zeroOffsetMm, 2)} hint={report.zeroOffsetSeMm == null ? undefined : `± ${num(report.zeroOffsetSeMm, 2)} mm (1 SE)`} />
      <Figure label="Scale error" value={report.scalePpm == null ? "—" : `${num(report.scalePpm, 1)} ppm`} hint={report.scaleSePpm == null ? undefined : `± ${num(report.scaleSePpm, 1)} ppm (1 SE)`} />
      <Figure label="R² of the fit" value={num(report.rSquared, 3)} />
      <Figure label="Coverage factor k" value={num(report.rule.coverageK, 1)} hint={`min. ${report.rule.minShots} shots`} />
    </dl>
  );
}

export function BandTable({ title, rows }: { title: string; rows: BandRow[] }) {
  return (
    <table className="w-full border-collapse text-left">
      <caption className="mb-1 text-left text-lg font-bold">{title}</caption>
      <thead>
        <tr className="border-b-2 border-line">
          <th scope="col" className="py-1 pr-2">
            Band
          </th>
          <th scope="col" className="py-1 pr-2 text-right">
            n
          </th>
          <th scope="col" className="py-1 pr-2 text-right">
            Bias (mm)
          </th>
          <th scope="col" className="py-1 pr-2 text-right">
            SD (mm)
          </th>
          <th scope="col" className="py-1 pr-2 text-right">
            RMSE (mm)
          </th>
          <th scope="col" className="py-1 text-right">
            Within (%)
          </th>
        </tr>
      </thead>
      <tbody>
        {rows.length === 0 ? (
          <tr>
            <td colSpan={6} className="py-2 text-muted">
              No shots in any band.
            </td>
          </tr>
        ) : (
          rows.map((r) => (
            <tr key={r.band} className="border-b border-line num">
              <th scope="row" className="py-1 pr-2 text-left font-normal">
                {bandWord(r.band)}
              </th>
              <td className="py-1 pr-2 text-right">{r.n}</td>
              <td className="py-1 pr-2 text-right">{signedOrDash(r.biasMm)}</td>
              <td className="py-1 pr-2 text-right">{num(r.sdMm, 2)}</td>
              <td className="py-1 pr-2 text-right">{num(r.rmseMm, 2)}</td>
              <td className="py-1 text-right">{num(r.withinPct, 1)}</td>
            </tr>
          ))
        )}
      </tbody>
    </table>
  );
}

function signedOrDash(v: number | null) {
  return v == null ? "—" : (v < 0 ? "−" : "+") + Math.abs(v).toFixed(2);
}

export function VerdictHeadline({ report, included }: { report: Explained; included?: IncludedTotals }) {
  const { flaggedLine, testLines } = explanationOf(report, included);
  const tone = report.verdict === "pass" ? "border-pass" : report.verdict === "fail" ? "border-fail" : "border-warn";
  return (
    <div className={`rounded-lg border-4 ${tone} bg-surface p-4`} data-testid="verdict-headline">
      <p className="flex items-center gap-3 text-2xl">
        <VerdictBadge verdict={report.verdict} />
      </p>
      {flaggedLine || testLines.length ? (
        <ul className="mt-2 space-y-1 text-lg" data-testid="why">
          {flaggedLine ? (
            <li className="flex items-start gap-2 font-bold" data-testid="why-flagged">
              <span className="mt-0.5 text-warn" aria-hidden="true">
                ⚑
              </span>
              <span>{flaggedLine}</span>
            </li>
          ) : null}
          {testLines.map((l) => (
            <li key={l} className="flex items-start gap-2">
              <span className="mt-1 text-fail">
                <VerdictShape verdict="fail" size={14} />
              </span>
              <span>{l}</span>
            </li>
          ))}
        </ul>
      ) : (
        <p className="mt-2 text-lg">All four tests hold.</p>
      )}
    </div>
  );
}

export function CoverageNote({ coverage }: { coverage: ReportJson["coverage"] }) {
  if (coverage.complete && !coverage.needsBrightSun) return <p>Coverage checklist complete.</p>;
  return (
    <div>
      <p className="font-bold">Coverage checklist (guidance, not part of the verdict):</p>
      <ul className="list-disc pl-6">
        {coverage.missing.map((m) => (
          <li key={`${m.rangeBand}-${m.reflectance}`}>
            {m.rangeBand} m, {m.reflectance} targets: {m.have} of {m.need} shots
          </li>
        ))}
        {coverage.needsBrightSun ? <li>No session at ≥ 50 klux (bright sun) yet.</li> : null}
      </ul>
    </div>
  );
}
