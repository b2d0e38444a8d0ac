// POST /api/edms (admin, issue 15): register a reference EDM from a script or pipeline; body and
// answers in api.md "v1.1 additions" and the README. Authentication (401) and the role check
// (403) come before validation.
import type { Route } from "./+types/api.edms";
import { requireApiUser } from "~/auth/guards.server";
import { ADMIN } from "~/auth/access";
import { createEdm, edmsJson } from "~/models/edms.server";
import { registryPost } from "~/http/registry-post.server";

// GET /api/edms (any signed-in role, issue 14): the reference EDMs of the user's projects; see edmsJson.
export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireApiUser(request);
  const result = await edmsJson(user, new URL(request.url).searchParams);
  return Response.json(result.body, { status: result.status, headers: { "Cache-Control": "private, no-store" } });
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requireApiUser(request, ADMIN);
  return registryPost(request, (body) => createEdm(user, body));
}
