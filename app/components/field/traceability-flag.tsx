// issue 15 (ranging.md §7): before the first shot, the session screen shows the sensor's laser
// class with its cautions, and flags a sensor or tape certificate that is past due on the
// session's own date — the check would not be traceable.
import { laserCaution, pastDueOn } from "~/domain";
import type { PreviewContext } from "~/offline/preview";
import type { LocalSession } from "~/offline/types";

export function SessionTraceability({ session, ctx }: { session: LocalSession; ctx: PreviewContext }) {
  const startedAt = session.record.startedAt;
  const sensor = ctx.sensor;
  const late: string[] = [];
  if (sensor?.certDue && pastDueOn(sensor.certDue, startedAt)) late.push(`the sensor's certificate ${sensor.certNumber ?? ""} was due ${sensor.certDue}`);
  for (const t of ctx.tapes) if (t.certDue && pastDueOn(t.certDue, startedAt)) late.push(`tape ${t.label}: certificate ${t.certNumber ?? ""} was due ${t.certDue}`);
  for (const e of ctx.edms ?? []) if (e.certDue && pastDueOn(e.certDue, startedAt)) late.push(`reference EDM ${e.label}: certificate ${e.certNumber ?? ""} was due ${e.certDue}`);
  const caution = laserCaution(sensor?.laserClass);
  return (
    <div className="space-y-3">
      {late.length ? (
        <div role="alert" className="card border-4 border-fail" data-testid="certificate-past-due">
          <p className="text-xl font-bold text-fail">⚠ Certificate past due on this session's date</p>
          <ul className="list-disc pl-6">
            {late.map((l) => (
              <li key={l}>{l.replace(/\s+/g, " ")}</li>
            ))}
          </ul>
          <p>Shots are still saved, but the report will flag them as not traceable. Tell the office, or use an instrument whose certificate is current.</p>
        </div>
      ) : null}
      <p className="card" data-testid="laser-class">
        <strong>{sensor?.laserClass ? `Laser class ${sensor.laserClass} (IEC 60825-1). ` : "Laser class not recorded. "}</strong>
        {caution ?? "Treat the beam as hazardous until the class is known."} Never aim at people, vehicles or aircraft; set out traffic control when targets stand by a road.
      </p>
    </div>
  );
}
