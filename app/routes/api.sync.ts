// POST /api/sync (crew, qa, admin): the tablet's outbox, answered per record (api.md).
import { requireApiUser } from "~/auth/guards.server";
import { FIELD } from "~/auth/access";
import { answerSync, NOT_JSON } from "~/models/sync-answer.server";
import { noticeFailedVerdicts } from "~/models/verdict-notice.server";
import type { Route } from "./+types/api.sync";
import { BODY_LIMITS, readBodyCapped } from "~/http/body.server";

export async function action({ request }: Route.ActionArgs) {
  const user = await requireApiUser(request, FIELD);
  if (request.method !== "POST") return Response.json({ error: "Use POST." }, { status: 405, headers: { Allow: "POST" } });
  let bytes: Uint8Array<ArrayBuffer>;
  try {
    // api.md: 8 MB; 500 shots with raw phase samples stay well below it.
    bytes = await readBodyCapped(request, BODY_LIMITS.sync);
  } catch (e) {
    if (e instanceof Response) return e;
    // the connection dropped mid-body: nothing is written
    return Response.json({ error: NOT_JSON }, { status: 400 });
  }
  // issue 16: parsed, checked, stored and serialised on a sync worker on the production server
  // (sync-answer.server.ts); busy after the tries inside the request answers 503 + Retry-After.
  const answer = await answerSync({ id: user.id, role: user.role }, bytes, request.headers.get("Accept-Encoding"));
  // A sensor whose verdict turned to fail on this sync: QA hears of it by mail. The mail
  // module never throws; a notice that cannot be sent is logged and retried. On the production
  // server the notice runs after the answer, coalesced across syncs (verdict-notice.server.ts).
  if (answer.sensorIds?.length) await noticeFailedVerdicts(answer.sensorIds);
  return new Response(answer.body, { status: answer.status, headers: answer.headers });
}
