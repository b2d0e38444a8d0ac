import { Link } from "react-router";
import type { LocalShot, RefSite } from "~/offline/types";
import { signedMm, WithinWord } from "./feedback";
import { fmt } from "./inputs";

export function StateWord({ state }: { state: LocalShot["state"] }) {
  if (state === "synced") return <span className="font-bold text-pass">✓ Synced</span>;
  if (state === "rejected") return <span className="font-bold text-fail">✕ Refused</span>;
  return <span className="font-bold">◷ Queued</span>;
}

export function ShotList({ shots, site, photoShotIds }: { shots: LocalShot[]; site: RefSite | undefined; photoShotIds: string[] }) {
  if (shots.length === 0) return <p className="text-muted">No shots in this session yet.</p>;
  const withPhoto = new Set(photoShotIds);
  return (
    <div className="overflow-x-auto">
      <table className="w-full border-collapse text-left" data-testid="shot-table">
        <thead>
          <tr className="border-b-2 border-line">
            <th scope="col" className="p-2">#</th>
            <th scope="col" className="p-2">Target</th>
            <th scope="col" className="p-2 text-right">Reference (m)</th>
            <th scope="col" className="p-2 text-right">Error (mm)</th>
            <th scope="col" className="p-2 text-right">Limit (mm)</th>
            <th scope="col" className="p-2">Check</th>
            <th scope="col" className="p-2">Outbox</th>
          </tr>
        </thead>
        <tbody>
          {shots.map((s, i) => {
            const t = site?.targets.find((x) => x.id === s.record.targetId);
            return (
              <tr key={s.id} className="border-b border-line" data-testid="shot-row" data-state={s.state}>
                <td className="num p-2">{i + 1}</td>
                <td className="p-2">
                  {t?.label ?? "—"} {withPhoto.has(s.id) ? <span title="with photo" aria-label="with photo">📷</span> : null}
                </td>
                <td className="num p-2 text-right">{s.preview ? fmt(s.preview.referenceM, 3) : "—"}</td>
                <td className="num p-2 text-right">{s.preview ? signedMm(s.preview.errorMm).replace(" mm", "") : "—"}</td>
                <td className="num p-2 text-right">{s.preview ? `±${fmt(s.preview.limitMm, 1)}` : "—"}</td>
                <td className="p-2">{s.preview ? <WithinWord within={s.preview.within} /> : <span className="text-muted">not checked</span>}</td>
                <td className="p-2">
                  <StateWord state={s.state} />
                  {s.state !== "synced" ? (
                    <>
                      {" "}
                      <Link className="inline-flex min-h-11 min-w-11 items-center justify-center px-2 font-bold underline underline-offset-4" to={`/field/session/${s.sessionId}/shot/${s.id}`}>
                        {s.state === "rejected" ? "Fix" : "Edit"}
                      </Link>
                    </>
                  ) : null}
                </td>
              </tr>
            );
          })}
        </tbody>
      </table>
    </div>
  );
}
