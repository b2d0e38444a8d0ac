// GET /api/sensors/:sensorId/report/series (any signed-in role): what the report page draws at
// any number of shots (issue 16): the error-against-distance series (every notable shot, a
// sample of the others, their spread per distance bin), the reflectance × illuminance cells and
// the totals and flagged shots that explain the verdict. Query: that of …/report.
import { requireApiUser } from "~/auth/guards.server";
import { reportSeries } from "~/models/report-series.server";
import type { Route } from "./+types/api.sensors.$sensorId.report.series";

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireApiUser(request);
  const result = await reportSeries(user, params.sensorId, new URL(request.url).searchParams);
  return Response.json(result.body, { status: result.status, headers: { "Cache-Control": "private, no-store" } });
}
