// /admin/projects: projects with their acceptance rules (admin).
import { data, Link } from "react-router";
import type { Route } from "./+types/admin.projects";
import { ADMIN } from "~/auth/access";
import { takeFlash } from "~/auth/flash.server";
import { requireRole } from "~/auth/guards.server";
import { RegistryListHead } from "~/components/registry-record";
import { listProjects } from "~/models/projects.server";

export const meta: Route.MetaFunction = () => [{ title: "Projects — Shotbook" }];

export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, ADMIN);
  const includeRetired = new URL(request.url).searchParams.get("retired") === "show";
  const [rows, all] = await Promise.all([listProjects({ includeRetired }), listProjects({ includeRetired: true })]);
  const { flash, headers } = await takeFlash(request);
  return data({ projects: rows, includeRetired, retiredCount: all.filter((p) => p.retiredAt).length, flash }, { headers });
}

export default function Projects({ loaderData }: Route.ComponentProps) {
  const { projects, includeRetired, retiredCount, flash } = loaderData;
  return (
    <div className="space-y-4">
      <RegistryListHead title="Projects" listTo="/admin/projects" newLabel="New project" plural="projects" canEdit={true} flash={flash} includeRetired={includeRetired} retiredCount={retiredCount} />
      {projects.length === 0 ? (
        <div className="card">
          <p className="text-lg font-bold">No projects yet.</p>
          <p>A project holds the client's acceptance rule and the sensors and sites it uses. Without one the default rule applies.</p>
        </div>
      ) : (
        <div className="overflow-x-auto">
          <table className="w-full border-collapse text-left" data-testid="project-table">
            <thead>
              <tr className="border-b-2 border-line">
                <th className="p-2">Name</th>
                <th className="p-2">Client</th>
                <th className="p-2">Rule</th>
                <th className="p-2">Sensors</th>
                <th className="p-2">Sites</th>
              </tr>
            </thead>
            <tbody>
              {projects.map((p) => (
                <tr key={p.id} className="border-b border-line align-top">
                  <td className="p-2 font-bold">
                    <Link className="inline-flex min-h-11 items-center underline underline-offset-4" to={`/admin/projects/${encodeURIComponent(p.id)}`}>
                      {p.name}
                    </Link>
                    {p.retiredAt ? <span className="ml-2 rounded border-2 border-line px-1.5 text-sm uppercase">Retired</span> : null}
                  </td>
                  <td className="p-2">{p.client || <span className="text-muted">—</span>}</td>
                  <td className="p-2 num">
                    ≥ {p.minShots} shots, k = {p.coverageK}, ≥ {p.minWithinPct} % within
                    <span className="block text-sm text-muted">bands {p.rangeBandEdgesM.join(", ")} m</span>
                  </td>
                  <td className="p-2">{p.sensorLabels || <span className="text-muted">none</span>}</td>
                  <td className="p-2">{p.siteNames || <span className="text-muted">none</span>}</td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      )}
    </div>
  );
}
