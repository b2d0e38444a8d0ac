// POST /api/sync (crew, qa, admin): the tablet's outbox, answered per record (api.md).
import { requireApiUser } from "~/auth/guards.server";
import { FIELD } from "~/auth/access";
import { DatabaseUnavailable, unavailableResponse } from "~/db/transient.server";
import { ingestSync } from "~/models/sync.server";
import { noticeFailedVerdicts } from "~/models/verdict-notice.server";
import type { Route } from "./+types/api.sync";
import { BODY_LIMITS, readJsonCapped } from "~/http/body.server";

export async function action({ request }: Route.ActionArgs) {
  const user = await requireApiUser(request, FIELD);
  if (request.method !== "POST") return Response.json({ error: "Use POST." }, { status: 405, headers: { Allow: "POST" } });
  let body: unknown;
  try {
    // api.md: 8 MB; 500 shots with raw phase samples stay well below it.
    body = await readJsonCapped(request, BODY_LIMITS.sync);
  } catch (e) {
    if (e instanceof Response) return e;
    // not JSON, or the connection dropped mid-body: nothing is written
    return Response.json({ error: "The body is not JSON (or it arrived incomplete); nothing was written." }, { status: 400 });
  }
  let answer: Awaited<ReturnType<typeof ingestSync>>;
  try {
    answer = await ingestSync({ id: user.id, role: user.role }, body);
  } catch (e) {
    // busy, or a replica that cannot reach its primary, after the tries inside the request
    if (e instanceof DatabaseUnavailable) return unavailableResponse(e);
    throw e;
  }
  // A sensor whose verdict turned to fail on this sync: QA hears of it by mail. The mail
  // module never throws; a notice that cannot be sent is logged and retried. On the production
  // server the notice runs after the answer, coalesced across syncs (verdict-notice.server.ts).
  if (answer.sensorIds?.length) await noticeFailedVerdicts(answer.sensorIds);
  return Response.json(answer.body, { status: answer.status, headers: { "Cache-Control": "no-store", ...answer.headers } });
}
