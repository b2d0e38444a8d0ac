// POST /api/sensors (admin): create a sensor from a script or pipeline; body and answers in api.md
// and the README, "Registry API (admin): sensors, tapes, sites". Authentication (401) and the role check (403) come first.
import type { Route } from "./+types/api.sensors";
import { requireApiUser } from "~/auth/guards.server";
import { ADMIN } from "~/auth/access";
import { createSensor } from "~/models/sensors.server";
import { listSensorSummaries } from "~/models/reports.server";
import { BODY_LIMITS, readJsonCapped } from "~/http/body.server";

// GET /api/sensors (any signed-in role): every live sensor with its verdict (sync and reports).
export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireApiUser(request);
  const result = await listSensorSummaries(user, new URL(request.url).searchParams);
  return Response.json(result.body, { status: result.status, headers: { "Cache-Control": "private, no-store" } });
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requireApiUser(request, ADMIN);
  if (request.method !== "POST") return Response.json({ error: "Use POST." }, { status: 405, headers: { Allow: "POST" } });
  let body: unknown;
  try {
    body = await readJsonCapped(request, BODY_LIMITS.registryJson);
  } catch (e) {
    if (e instanceof Response) return e;
    return Response.json({ error: "The body is not JSON.", errors: [{ path: "", message: "Send a JSON object" }] }, { status: 400 });
  }
  const result = await createSensor(user, body);
  return Response.json(result.body, { status: result.status });
}
