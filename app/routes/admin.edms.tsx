// /admin/edms (issue 15): reference EDMs whose certificates make EDM reference distances traceable. Every role reads its projects' EDMs (issue 14); only an admin edits.
import { data, Link } from "react-router";
import type { Route } from "./+types/admin.edms";
import { ALL } from "~/auth/access";
import { takeFlash } from "~/auth/flash.server";
import { requireRole } from "~/auth/guards.server";
import { RegistryListHead } from "~/components/registry-record";
import { listEdms } from "~/models/edms.server";
import { calibrationState } from "~/contract/registry";

export const meta: Route.MetaFunction = () => [{ title: "Reference EDMs — Shotbook" }];

export async function loader({ request }: Route.LoaderArgs) {
  // issue 14: every role may read it, scoped to their projects' edms; only an admin edits
  const user = await requireRole(request, ALL);
  const includeRetired = new URL(request.url).searchParams.get("retired") === "show";
  const [rows, all] = await Promise.all([listEdms(user, { includeRetired }), listEdms(user, { includeRetired: true })]);
  const { flash, headers } = await takeFlash(request);
  return data({ edms: rows, canEdit: user.role === "admin", includeRetired, retiredCount: all.filter((t) => t.retiredAt).length, flash }, { headers });
}

export default function Edms({ loaderData }: Route.ComponentProps) {
  const { edms, canEdit, includeRetired, retiredCount, flash } = loaderData;
  return (
    <div className="space-y-4">
      <RegistryListHead
        title="Reference EDMs"
        listTo="/admin/edms"
        newLabel="New reference EDM"
        plural="EDMs"
        canEdit={canEdit}
        flash={flash}
        includeRetired={includeRetired}
        retiredCount={retiredCount}
      />
      {edms.length === 0 ? (
        <div className="card">
          <p className="text-lg font-bold">No reference EDMs yet.</p>
          <p>
            {canEdit
              ? "Add the instrument that measures EDM reference distances, with its certificate: shots that name it take their reference uncertainty from it. Then tick it on the projects that use it."
              : "None of your projects lists a reference EDM yet: an admin adds them on the project page."}
          </p>
        </div>
      ) : (
        <div className="overflow-x-auto">
          <table className="w-full border-collapse text-left" data-testid="edm-table">
            <thead>
              <tr className="border-b-2 border-line">
                <th className="p-2">Label</th>
                <th className="p-2">Serial</th>
                <th className="p-2 text-right">Uncertainty (k = 1)</th>
                <th className="p-2">Certificate</th>
              </tr>
            </thead>
            <tbody>
              {edms.map((t) => {
                const state = calibrationState(t.certDue);
                return (
                  <tr key={t.id} className="border-b border-line">
                    <td className="p-2 font-bold">
                      <Link className="inline-flex min-h-11 items-center underline underline-offset-4" to={`/admin/edms/${encodeURIComponent(t.id)}`}>
                        {t.label}
                      </Link>
                      {t.retiredAt ? <span className="ml-2 rounded border-2 border-line px-1.5 text-sm uppercase">Retired</span> : null}
                    </td>
                    <td className="p-2">{t.serial}</td>
                    <td className="p-2 num text-right">
                      {t.uncertaintyMm} mm + {t.uncertaintyPpm} ppm
                    </td>
                    <td className="p-2">
                      {t.certNumber ? `No. ${t.certNumber}, due ${t.certDue}` : "none"}
                      {state === "overdue" ? <strong className="ml-2 text-fail">⚠ past due</strong> : state === "soon" ? <strong className="ml-2">due soon</strong> : null}
                    </td>
                  </tr>
                );
              })}
            </tbody>
          </table>
        </div>
      )}
    </div>
  );
}
