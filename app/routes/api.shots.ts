// GET /api/shots (any signed-in role): shots for tables, cursor-paged in time order.
import { requireApiUser } from "~/auth/guards.server";
import { listShots } from "~/models/shots.server";
import { parseShotQuery } from "~/models/shot-query.server";
import type { Route } from "./+types/api.shots";

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireApiUser(request);
  const q = parseShotQuery(new URL(request.url), { paged: true });
  if ("status" in q) return Response.json(q.body, { status: q.status });
  const result = await listShots(user, q);
  return Response.json(result.body, { status: result.status, headers: { "Cache-Control": "private, no-store" } });
}
