// GET /api/projects/:projectId/bundle.zip (members of the project, any role; admins): the CSV
// bundle of the project's current report version — shots.csv, summary.csv, report.json and the
// photos — as one zip, streamed. 404 outside the reader's projects.
import { requireApiUser } from "~/auth/guards.server";
import { projectBundle } from "~/models/project-report-downloads.server";
import type { Route } from "./+types/api.projects.$projectId.bundle[.]zip";

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireApiUser(request);
  const bundle = await projectBundle(user, params.projectId);
  if (!bundle) return Response.json({ error: `No project ${params.projectId}.` }, { status: 404 });
  return new Response(bundle.body, {
    headers: {
      "Content-Type": "application/zip",
      "Content-Disposition": `attachment; filename="${bundle.filename}"`,
      "Cache-Control": "private, no-store",
      "X-Report-Version": String(bundle.version.version),
      "X-Report-Sha256": bundle.version.sha256,
    },
  });
}
