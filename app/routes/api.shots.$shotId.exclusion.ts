// POST /api/shots/:shotId/exclusion { reason } excludes a shot; DELETE { reason } restores it
// (qa, admin). Both answer 200 with the shot's new state and its exclusion history.
import { requireApiUser } from "~/auth/guards.server";
import { REVIEWERS } from "~/auth/access";
import { excludeShot, restoreShot } from "~/models/exclusions.server";
import type { Route } from "./+types/api.shots.$shotId.exclusion";
import { BODY_LIMITS, readFormCapped, readTextCapped } from "~/http/body.server";

async function readBody(request: Request): Promise<unknown> {
  const type = request.headers.get("Content-Type") ?? "";
  if (type.includes("application/x-www-form-urlencoded") || type.includes("multipart/form-data")) {
    return Object.fromEntries(await readFormCapped(request));
  }
  const text = await readTextCapped(request, BODY_LIMITS.form);
  if (!text.trim()) return {};
  return JSON.parse(text);
}

export async function action({ request, params }: Route.ActionArgs) {
  const user = await requireApiUser(request, REVIEWERS);
  if (request.method !== "POST" && request.method !== "DELETE") {
    return Response.json({ error: "Use POST to exclude or DELETE to restore." }, { status: 405, headers: { Allow: "POST, DELETE" } });
  }
  let body: unknown;
  try {
    body = await readBody(request);
  } catch {
    return Response.json({ error: "The body is not JSON.", errors: [{ path: "reason", message: 'Send { "reason": "…" }' }] }, { status: 400 });
  }
  const result = request.method === "POST" ? await excludeShot(user, params.shotId, body) : await restoreShot(user, params.shotId, body);
  return Response.json(result.body, { status: result.status });
}
