// POST /api/sites (admin): create a site from a script or pipeline; body and answers in api.md
// and the README, "Registry API (admin): sensors, tapes, sites". Authentication (401) and the role check (403) come first.
import type { Route } from "./+types/api.sites";
import { requireApiUser } from "~/auth/guards.server";
import { ADMIN } from "~/auth/access";
import { createSite } from "~/models/sites.server";
import { registryPost } from "~/http/registry-post.server";

export async function action({ request }: Route.ActionArgs) {
  const user = await requireApiUser(request, ADMIN);
  return registryPost(request, (body) => createSite(user, body));
}
