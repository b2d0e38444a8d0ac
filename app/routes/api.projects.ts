// POST /api/projects (admin): a project with its sensors, sites, members and acceptance rule from
// a script or pipeline; body and answers in api.md (v1.1) and the README. Authentication (401)
// and the role check (403) come first.
import type { Route } from "./+types/api.projects";
import { requireApiUser } from "~/auth/guards.server";
import { ADMIN } from "~/auth/access";
import { createProjectFromApi } from "~/models/projects-api.server";
import { registryPost } from "~/http/registry-post.server";

export async function action({ request }: Route.ActionArgs) {
  const user = await requireApiUser(request, ADMIN);
  return registryPost(request, (body) => createProjectFromApi(user, body));
}
