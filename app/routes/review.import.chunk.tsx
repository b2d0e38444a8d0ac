// POST /review/import/chunk (crew, qa, admin): one chunk of a CSV import, as JSON, for the
// import page's progress bar. Answers per CSV row; see the README, "Review (QA): pages and the import route".
import type { Route } from "./+types/review.import.chunk";
import { FIELD } from "~/auth/access";
import { requireApiUser } from "~/auth/guards.server";
import { importChunk } from "~/models/imports.server";
import { BODY_LIMITS, readJsonCapped } from "~/http/body.server";

export async function action({ request }: Route.ActionArgs) {
  const user = await requireApiUser(request, FIELD);
  if (request.method !== "POST") return Response.json({ error: "Use POST." }, { status: 405, headers: { Allow: "POST" } });
  let body: unknown;
  try {
    body = await readJsonCapped(request, BODY_LIMITS.importChunk);
  } catch (e) {
    if (e instanceof Response) return e;
    return Response.json({ error: "The body is not JSON." }, { status: 400 });
  }
  const answer = await importChunk(user, body);
  return Response.json(answer.body, { status: answer.status });
}
