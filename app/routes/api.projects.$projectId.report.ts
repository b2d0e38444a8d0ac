// GET /api/projects/:projectId/report (members of the project, any role; admins): the project
// verification report as it stands now (a new version is stored when its content changed), or
// a stored version with ?version=N; with every version's number, hash and date. 404 outside
// the reader's projects, exactly as for an unknown project.
import { requireApiUser } from "~/auth/guards.server";
import { currentProjectReport, listProjectReportVersions, projectReportVersion } from "~/models/project-report.server";
import type { Route } from "./+types/api.projects.$projectId.report";

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireApiUser(request);
  const raw = new URL(request.url).searchParams.get("version");
  if (raw !== null && !/^[1-9]\d{0,8}$/.test(raw)) {
    return Response.json({ error: "Invalid query.", errors: [{ path: "version", message: "version must be a whole number from 1" }] }, { status: 400 });
  }
  const current = await currentProjectReport(user, params.projectId);
  if (!current) return Response.json({ error: `No project ${params.projectId}.` }, { status: 404 });
  const shown = raw === null ? current : await projectReportVersion(user, params.projectId, Number(raw));
  if (!shown) return Response.json({ error: `No version ${raw} of the report of project ${params.projectId}.` }, { status: 404 });
  const versions = (await listProjectReportVersions(user, params.projectId)) ?? [];
  const body = {
    projectId: shown.projectId,
    number: shown.number,
    version: shown.version,
    sha256: shown.sha256,
    createdAt: shown.createdAt,
    createdBy: shown.createdBy,
    current: shown.version === current.version,
    content: shown.content,
    versions,
  };
  return new Response(JSON.stringify(body), { headers: { "Content-Type": "application/json; charset=utf-8", "Cache-Control": "private, no-store" } });
}
