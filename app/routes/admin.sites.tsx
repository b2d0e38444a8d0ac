// /admin/sites: test ranges and baselines with their targets. Every role may read it.
import { data, Link } from "react-router";
import type { Route } from "./+types/admin.sites";
import { ALL } from "~/auth/access";
import { takeFlash } from "~/auth/flash.server";
import { requireRole } from "~/auth/guards.server";
import { RegistryListHead } from "~/components/registry-record";
import { listSites } from "~/models/sites.server";

export const meta: Route.MetaFunction = () => [{ title: "Sites — Shotbook" }];

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireRole(request, ALL);
  const includeRetired = new URL(request.url).searchParams.get("retired") === "show";
  const [rows, all] = await Promise.all([listSites(user, { includeRetired }), listSites(user, { includeRetired: true })]);
  const { flash, headers } = await takeFlash(request);
  return data(
    {
      canEdit: user.role === "admin",
      includeRetired,
      retiredCount: all.filter((s) => s.retiredAt).length,
      flash,
      sites: rows.map((s) => ({
        id: s.id,
        name: s.name,
        lat: s.lat,
        lon: s.lon,
        targetCount: s.targetCount,
        stationCount: s.stationCount,
        targetLabels: s.targetLabels,
        retiredAt: s.retiredAt,
      })),
    },
    { headers },
  );
}

export default function Sites({ loaderData }: Route.ComponentProps) {
  const { sites, canEdit, includeRetired, retiredCount, flash } = loaderData;
  return (
    <div className="space-y-4">
      <RegistryListHead title="Sites" listTo="/admin/sites" newLabel="New site" plural="sites" canEdit={canEdit} flash={flash} includeRetired={includeRetired} retiredCount={retiredCount} />
      {sites.length === 0 ? (
        <div className="card">
          <p className="text-lg font-bold">No sites yet.</p>
          <p>{canEdit ? "Add a test range or baseline with its targets, or POST it to /api/sites." : "An admin adds the sites."}</p>
        </div>
      ) : (
        <div className="overflow-x-auto">
          <table className="w-full border-collapse text-left" data-testid="site-table">
            <thead>
              <tr className="border-b-2 border-line">
                <th className="p-2">Name</th>
                <th className="p-2 text-right">Stations</th>
                <th className="p-2">Targets</th>
                <th className="p-2">Position</th>
              </tr>
            </thead>
            <tbody>
              {sites.map((s) => (
                <tr key={s.id} className="border-b border-line align-top">
                  <td className="p-2 font-bold">
                    {canEdit ? (
                      <Link className="inline-flex min-h-11 items-center underline underline-offset-4" to={`/admin/sites/${encodeURIComponent(s.id)}`}>
                        {s.name}
                      </Link>
                    ) : (
                      s.name
                    )}
                    {s.retiredAt ? <span className="ml-2 rounded border-2 border-line px-1.5 text-sm uppercase">Retired</span> : null}
                  </td>
                  <td className="p-2 num text-right">{s.stationCount}</td>
                  <td className="p-2">
                    <span className="num font-bold">{s.targetCount}</span>
                    {s.targetLabels ? <span className="block text-sm text-muted">{s.targetLabels}</span> : null}
                  </td>
                  <td className="p-2 num">{s.lat !== null && s.lon !== null ? `${s.lat.toFixed(5)}°, ${s.lon.toFixed(5)}°` : <span className="text-muted">not set</span>}</td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      )}
    </div>
  );
}
