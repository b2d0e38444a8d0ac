// GET /api/shots.geojson (any signed-in role): located shots as a FeatureCollection for the map.
import { requireApiUser } from "~/auth/guards.server";
import { parseShotQuery } from "~/models/shot-query.server";
import { shotsGeoJson } from "~/models/shots.server";
import type { Route } from "./+types/api.shots[.]geojson";

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireApiUser(request);
  const q = parseShotQuery(new URL(request.url), { paged: false });
  if ("status" in q) return Response.json(q.body, { status: q.status });
  const result = await shotsGeoJson(user, q);
  if (result.status !== 200) return Response.json(result.body, { status: result.status });
  return new Response(JSON.stringify(result.body), {
    headers: { "Content-Type": "application/geo+json; charset=utf-8", "Cache-Control": "private, no-store" },
  });
}
