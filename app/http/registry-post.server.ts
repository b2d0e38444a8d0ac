// The POST half of the registry API routes (/api/sensors, /api/sites, /api/tapes, /api/edms,
// /api/projects; api.md "Registry API"), after the route's guard: another method answers 405, a
// body over the registry cap 413, a body that is not JSON 400, anything else the model's answer.
import { BODY_LIMITS, readJsonCapped } from "~/http/body.server";

export async function registryPost(request: Request, create: (body: unknown) => Promise<{ status: number; body: unknown }>): Promise<Response> {
  if (request.method !== "POST") return Response.json({ error: "Use POST." }, { status: 405, headers: { Allow: "POST" } });
  let body: unknown;
  try {
    body = await readJsonCapped(request, BODY_LIMITS.registryJson);
  } catch (e) {
    if (e instanceof Response) return e;
    return Response.json({ error: "The body is not JSON.", errors: [{ path: "", message: "Send a JSON object" }] }, { status: 400 });
  }
  const result = await create(body);
  return Response.json(result.body, { status: result.status });
}
