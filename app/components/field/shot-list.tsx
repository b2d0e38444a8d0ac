import { memo, useState } from "react";
import { Link } from "react-router";
import type { LocalShot, RefSite } from "~/offline/types";
import { signedMm, WithinWord } from "./feedback";
import { fmt } from "./inputs";

export function StateWord({ state }: { state: LocalShot["state"] }) {
  if (state === "synced") return <span className="font-bold text-pass">✓ Synced</span>;
  if (state === "rejected") return <span className="font-bold text-fail">✕ Refused</span>;
  return <span className="font-bold">◷ Queued</span>;
}

/** Rows drawn at once: a week's session can hold a thousand shots, and the crew looks at the latest. */
export const SHOTS_SHOWN = 100;

export function ShotList({ shots, site, photoShotIds }: { shots: LocalShot[]; site: RefSite | undefined; photoShotIds: string[] }) {
  const [all, setAll] = useState(false);
  if (shots.length === 0) return <p className="text-muted">No shots in this session yet.</p>;
  const withPhoto = new Set(photoShotIds);
  const from = all ? 0 : Math.max(0, shots.length - SHOTS_SHOWN);
  return (
    <div className="space-y-2">
      {from > 0 ? (
        <p className="flex flex-wrap items-center gap-3" data-testid="shots-hidden">
          <span className="num">
            Showing the latest {SHOTS_SHOWN.toLocaleString("en-GB")} of {shots.length.toLocaleString("en-GB")} shots.
          </span>
          <button type="button" className="btn-secondary" onClick={() => setAll(true)}>
            Show all {shots.length.toLocaleString("en-GB")}
          </button>
        </p>
      ) : null}
      <div className="overflow-x-auto">
        <table className="w-full border-collapse text-left" data-testid="shot-table">
          <thead>
            <tr className="border-b-2 border-line">
              <th scope="col" className="p-2">
                #
              </th>
              <th scope="col" className="p-2">
                Target
              </th>
              <th scope="col" className="p-2 text-right">
                Reference (m)
              </th>
              <th scope="col" className="p-2 text-right">
                Error (mm)
              </th>
              <th scope="col" className="p-2 text-right">
                Limit (mm)
              </th>
              <th scope="col" className="p-2">
                Check
              </th>
              <th scope="col" className="p-2">
                Outbox
              </th>
            </tr>
          </thead>
          <tbody>
            {shots.slice(from).map((s, i) => (
              <ShotRow key={s.id} shot={s} n={from + i + 1} targetLabel={site?.targets.find((x) => x.id === s.record.targetId)?.label} photo={withPhoto.has(s.id)} />
            ))}
          </tbody>
        </table>
      </div>
    </div>
  );
}

type RowProps = { shot: LocalShot; n: number; targetLabel: string | undefined; photo: boolean };

/**
 * Every live-query answer brings fresh row objects; a row is drawn again only when what it
 * shows changed (a sync flips its state, an edit its preview), not for every neighbour's change.
 */
const ShotRow = memo(
  function ShotRow({ shot: s, n, targetLabel, photo }: RowProps) {
    return (
      <tr className="border-b border-line" data-testid="shot-row" data-state={s.state}>
        <td className="num p-2">{n}</td>
        <td className="p-2">
          {targetLabel ?? "—"}{" "}
          {photo ? (
            <span title="with photo" aria-label="with photo">
              📷
            </span>
          ) : null}
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
  },
  (a, b) =>
    a.n === b.n &&
    a.targetLabel === b.targetLabel &&
    a.photo === b.photo &&
    a.shot.id === b.shot.id &&
    a.shot.sessionId === b.shot.sessionId &&
    a.shot.state === b.shot.state &&
    a.shot.preview?.referenceM === b.shot.preview?.referenceM &&
    a.shot.preview?.errorMm === b.shot.preview?.errorMm &&
    a.shot.preview?.limitMm === b.shot.preview?.limitMm &&
    a.shot.preview?.within === b.shot.preview?.within,
);
