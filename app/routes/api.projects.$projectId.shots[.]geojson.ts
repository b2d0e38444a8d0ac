// GET /api/projects/:projectId/shots.geojson (members of the project, any role; admins): the
// project's located check-shots and sites as a GeoJSON FeatureCollection. 404 outside the
// reader's projects.
import { requireApiUser } from "~/auth/guards.server";
import { projectGeoJson } from "~/models/project-report-downloads.server";
import type { Route } from "./+types/api.projects.$projectId.shots[.]geojson";

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireApiUser(request);
  const g = await projectGeoJson(user, params.projectId);
  if (!g) return Response.json({ error: `No project ${params.projectId}.` }, { status: 404 });
  const download = new URL(request.url).searchParams.get("download") === "1";
  return new Response(JSON.stringify(g.body), {
    headers: {
      "Content-Type": "application/geo+json; charset=utf-8",
      "Cache-Control": "private, no-store",
      ...(download ? { "Content-Disposition": `attachment; filename="${g.filename}"` } : {}),
    },
  });
}
