// GET /api/sensors/:sensorId/report (any signed-in role): the sensor report of api.md.
// Query: from, to (YYYY-MM-DD), session (repeatable), project (whose rule judges), include=shots
// (the per-shot rows, streamed after the figures).
import { requireApiUser } from "~/auth/guards.server";
import { jsonBody, sensorReportJson } from "~/models/reports.server";
import type { Route } from "./+types/api.sensors.$sensorId.report";

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireApiUser(request);
  const result = await sensorReportJson(user, params.sensorId, new URL(request.url).searchParams);
  const headers = { "Cache-Control": "private, no-store" };
  if (result.status !== 200) return Response.json(result.body, { status: result.status, headers });
  if ("stream" in result) return new Response(result.stream, { status: 200, headers: { ...headers, "Content-Type": "application/json" } });
  // the bytes as the model keeps them for the next view of the same figures
  return new Response(jsonBody(result.json), {
    status: 200,
    headers: { ...headers, "Content-Type": "application/json", "Content-Length": String(result.json.byteLength) },
  });
}
