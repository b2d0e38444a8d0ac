// issue 12: QA's open re-shoot requests for this session's sensor and site, from the tablet's
// copy of the reference data (so they show offline). Closed requests leave with the next copy.
import { localDateTime } from "~/components/review/format";
import type { ReferenceCopy } from "~/offline/reference";

export function ReshootNotice({ reference, sensorId, siteId }: { reference: ReferenceCopy; sensorId: string; siteId: string }) {
  const list = (reference.reshoots ?? []).filter((r) => r.sensorId === sensorId && r.siteId === siteId);
  if (!list.length) return null;
  return (
    <section className="card space-y-2 border-4 border-warn" aria-labelledby="reshoot-title" data-testid="reshoot-notice">
      <h2 id="reshoot-title" className="text-xl font-bold">
        ⚑ {list.length === 1 ? "Re-shoot request" : `${list.length} re-shoot requests`} for this sensor at this site
      </h2>
      <ul className="space-y-2">
        {list.map((r) => {
          const project = r.projectId ? reference.projects.find((p) => p.id === r.projectId)?.name : null;
          return (
            <li key={r.id} className="text-lg" data-testid="reshoot-item">
              QA asks: <strong>{r.wanted}</strong>, because {r.reason}, from {r.byName}, <span className="num">{localDateTime(r.createdAt)}</span>
              {project ? ` (${project})` : ""}.
            </li>
          );
        })}
      </ul>
    </section>
  );
}
