// /admin/tapes: steel tapes used to set reference distances. Every role reads its projects' tapes (issue 14); only an admin edits.
import { data, Link } from "react-router";
import type { Route } from "./+types/admin.tapes";
import { ALL } from "~/auth/access";
import { takeFlash } from "~/auth/flash.server";
import { requireRole } from "~/auth/guards.server";
import { RegistryListHead } from "~/components/registry-record";
import { listTapes } from "~/models/tapes.server";

export const meta: Route.MetaFunction = () => [{ title: "Tapes — Shotbook" }];

export async function loader({ request }: Route.LoaderArgs) {
  // issue 14: every role may read it, scoped to their projects' tapes; only an admin edits
  const user = await requireRole(request, ALL);
  const includeRetired = new URL(request.url).searchParams.get("retired") === "show";
  const [rows, all] = await Promise.all([listTapes(user, { includeRetired }), listTapes(user, { includeRetired: true })]);
  const { flash, headers } = await takeFlash(request);
  return data({ tapes: rows, canEdit: user.role === "admin", includeRetired, retiredCount: all.filter((t) => t.retiredAt).length, flash }, { headers });
}

export default function Tapes({ loaderData }: Route.ComponentProps) {
  const { tapes, canEdit, includeRetired, retiredCount, flash } = loaderData;
  return (
    <div className="space-y-4">
      <RegistryListHead title="Tapes" listTo="/admin/tapes" newLabel="New tape" plural="tapes" canEdit={canEdit} flash={flash} includeRetired={includeRetired} retiredCount={retiredCount} />
      {tapes.length === 0 ? (
        <div className="card">
          <p className="text-lg font-bold">No tapes yet.</p>
          <p>
            {canEdit
              ? "Add a steel tape to let crews set reference distances by tape with temperature, tension and sag corrections; then tick it on the projects that use it."
              : "None of your projects lists a tape yet: an admin adds them on the project page."}
          </p>
        </div>
      ) : (
        <div className="overflow-x-auto">
          <table className="w-full border-collapse text-left" data-testid="tape-table">
            <thead>
              <tr className="border-b-2 border-line">
                <th className="p-2">Label</th>
                <th className="p-2 text-right">Standard</th>
                <th className="p-2 text-right">Cross-section</th>
                <th className="p-2 text-right">Modulus</th>
                <th className="p-2 text-right">Weight</th>
                <th className="p-2 text-right">Certificate</th>
              </tr>
            </thead>
            <tbody>
              {tapes.map((t) => (
                <tr key={t.id} className="border-b border-line">
                  <td className="p-2 font-bold">
                    <Link className="inline-flex min-h-11 items-center underline underline-offset-4" to={`/admin/tapes/${encodeURIComponent(t.id)}`}>
                      {t.label}
                    </Link>
                    {t.retiredAt ? <span className="ml-2 rounded border-2 border-line px-1.5 text-sm uppercase">Retired</span> : null}
                  </td>
                  <td className="p-2 num text-right">
                    {t.standardTempC} °C, {t.standardTensionN} N
                  </td>
                  <td className="p-2 num text-right">{t.areaMm2} mm²</td>
                  <td className="p-2 num text-right">{t.modulusGPa} GPa</td>
                  <td className="p-2 num text-right">{t.weightNPerM} N/m</td>
                  <td className="p-2 num text-right">
                    {t.calibrationPpm > 0 ? "+" : ""}
                    {t.calibrationPpm} ppm
                  </td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      )}
    </div>
  );
}
