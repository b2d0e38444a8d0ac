// GET /api/sensors/:sensorId/report (any signed-in role): the sensor report of api.md.
// Query: from, to (YYYY-MM-DD), session (repeatable), project (whose rule judges).
import { requireApiUser } from "~/auth/guards.server";
import { computeSensorReport } from "~/models/reports.server";
import type { Route } from "./+types/api.sensors.$sensorId.report";

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireApiUser(request);
  const result = await computeSensorReport(user, params.sensorId, new URL(request.url).searchParams);
  return Response.json(result.body, { status: result.status, headers: { "Cache-Control": "private, no-store" } });
}
