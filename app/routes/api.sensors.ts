// POST /api/sensors (admin): create a sensor from a script or pipeline; body and answers in api.md
// and the README, "Registry API (admin): sensors, tapes, sites". Authentication (401) and the role check (403) come first.
import type { Route } from "./+types/api.sensors";
import { requireApiUser } from "~/auth/guards.server";
import { ADMIN } from "~/auth/access";
import { createSensor } from "~/models/sensors.server";
import { listSensorSummaries } from "~/models/reports.server";
import { registryPost } from "~/http/registry-post.server";

// GET /api/sensors (any signed-in role): every live sensor with its verdict (sync and reports).
export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireApiUser(request);
  const result = await listSensorSummaries(user, new URL(request.url).searchParams);
  return Response.json(result.body, { status: result.status, headers: { "Cache-Control": "private, no-store" } });
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requireApiUser(request, ADMIN);
  return registryPost(request, (body) => createSensor(user, body));
}
