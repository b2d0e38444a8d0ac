// POST /api/tapes (admin): create a tape from a script or pipeline; body and answers in api.md
// and the README, "Registry API (admin): sensors, tapes, sites". Authentication (401) and the role check (403) come first.
import type { Route } from "./+types/api.tapes";
import { requireApiUser } from "~/auth/guards.server";
import { ADMIN } from "~/auth/access";
import { createTape } from "~/models/tapes.server";
import { BODY_LIMITS, readJsonCapped } from "~/http/body.server";

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
  const result = await createTape(user, body);
  return Response.json(result.body, { status: result.status });
}
