// One sensor's section of the project verification report (issue 14): its verdict, figures, bands,
// coverage, drift and accuracy statement as printed on the document. Issue 13: split out of the
// report route.
import type { ProjectReportContent, ProjectReportSensor } from "~/domain";
import { BandTable, CoverageNote, FiguresGrid, TestsTable } from "./report-figures";
import { StatementPanel, TraceabilityPanel } from "./statement";
import { DriftChart } from "./charts";
import { VerdictBadge, VerdictShape } from "../verdict-badge";
import type { ReportJson } from "./types";

/** The report API's shape for the shared figure components (the per-shot rows are not part of the document). */
function asReport(s: ProjectReportSensor, rule: ProjectReportContent["rule"]): ReportJson {
  return { ...s.figures!, sensorId: s.id, rule: { ...rule }, ruleProjectId: null, shots: [] } as unknown as ReportJson;
}

export function ProjectSensorSection({ s, rule, sessionLabel }: { s: ProjectReportSensor; rule: ProjectReportContent["rule"]; sessionLabel: (id: string) => string }) {
  const f = s.figures;
  const report = f ? asReport(s, rule) : null;
  const biasLimit = f?.tests.find((t) => t.name === "bias")?.limit ?? s.toleranceMm;
  return (
    <section className="space-y-3 border-t-4 border-fg pt-3" data-testid="project-sensor" data-sensor={s.id} data-verdict={s.verdict}>
      <div className="keep">
        <h2 className="text-2xl font-bold">
          {s.label} <span className="font-normal">· serial {s.serial}</span>
        </h2>
        <p>
          {s.kind === "cw" ? "Continuous-wave (phase)" : "Pulsed"} sensor, {s.wavelengthNm} nm · tolerance ±({s.toleranceMm} mm + {s.tolerancePpm} ppm × D)
          {s.calibrationDue ? ` · calibration due ${s.calibrationDue}` : ""}
          {s.laserClass ? ` · laser class ${s.laserClass} (IEC 60825-1)` : " · laser class not recorded"}
        </p>
        <div className={`mt-2 rounded-lg border-4 ${s.verdict === "pass" ? "border-pass" : s.verdict === "fail" ? "border-fail" : "border-warn"} p-3`}>
          <p className="text-2xl">
            <VerdictBadge verdict={s.verdict} />
          </p>
          {s.why.length ? (
            <ul className="mt-1 space-y-1">
              {s.why.map((l) => (
                <li key={l} className="flex items-start gap-2">
                  <span className="mt-1 text-fail">
                    <VerdictShape verdict="fail" size={14} />
                  </span>
                  <span>{l}</span>
                </li>
              ))}
            </ul>
          ) : (
            <p className="mt-1">All four tests hold.</p>
          )}
        </div>
      </div>
      {report && f ? (
        <>
          <div className="keep">
            <StatementPanel report={report} />
          </div>
          <div className="keep space-y-1">
            <h3 className="text-lg font-bold">Tests</h3>
            <TestsTable tests={f.tests} referenceInVerdict={rule.referenceInVerdict} />
          </div>
          <div className="space-y-1">
            <h3 className="text-lg font-bold">Figures (mm unless stated)</h3>
            <FiguresGrid report={report} />
            <p className="text-sm">
              Range error = sensor range − reference distance; positive reads long.{f.airDefaulted.length ? ` ${f.airDefaulted.length} session(s) used default air values for a missing reading.` : ""}
            </p>
          </div>
          <div className="keep space-y-1">
            <h3 className="text-lg font-bold">Bias per session</h3>
            {f.drift.length ? <DriftChart drift={f.drift} biasLimitMm={biasLimit} legendBeside /> : <p>No sessions.</p>}
          </div>
          <div className="keep">
            <BandTable title="By range band" rows={f.byRange} />
          </div>
          <div className="keep">
            <BandTable title="By reflectance" rows={f.byReflectance} />
          </div>
          <div className="keep">
            <CoverageNote coverage={f.coverage} />
          </div>
          <div className="keep space-y-1">
            <h3 className="text-lg font-bold">Traceability (calibration certificates)</h3>
            <TraceabilityPanel rows={f.traceability} sessionLabel={sessionLabel} />
          </div>
        </>
      ) : (
        <p data-testid="no-shots">No check-shots of this sensor on this project yet (the rule asks for at least {rule.minShots}).</p>
      )}
    </section>
  );
}
