// POST /api/tapes (admin): create a tape from a script or pipeline; body and answers in api.md
// and the README, "Registry API (admin): sensors, tapes, sites". Authentication (401) and the role check (403) come first.
import type { Route } from "./+types/api.tapes";
import { requireApiUser } from "~/auth/guards.server";
import { ADMIN } from "~/auth/access";
import { createTape, tapesJson } from "~/models/tapes.server";
import { registryPost } from "~/http/registry-post.server";

// GET /api/tapes (any signed-in role, issue 14): the tapes of the user's projects; see tapesJson.
export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireApiUser(request);
  const result = await tapesJson(user, new URL(request.url).searchParams);
  return Response.json(result.body, { status: result.status, headers: { "Cache-Control": "private, no-store" } });
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requireApiUser(request, ADMIN);
  return registryPost(request, (body) => createTape(user, body));
}
