// POST /api/sync (crew, qa, admin): the tablet's outbox, answered per record (api.md).
import { requireApiUser } from "~/auth/guards.server";
import { FIELD } from "~/auth/access";
import { DatabaseUnavailable, unavailableResponse } from "~/db/transient.server";
import { notifyFailedVerdicts } from "~/models/signoffs.server";
import { ingestSync } from "~/models/sync.server";
import type { Route } from "./+types/api.sync";

/** 500 shots with raw phase samples stay well below this; more is not a sync body. */
const MAX_BODY_BYTES = 20 * 1024 * 1024;

export async function action({ request }: Route.ActionArgs) {
  const user = await requireApiUser(request, FIELD);
  if (request.method !== "POST") return Response.json({ error: "Use POST." }, { status: 405, headers: { Allow: "POST" } });
  const length = Number(request.headers.get("Content-Length") ?? 0);
  if (length > MAX_BODY_BYTES) return Response.json({ error: `The body is larger than ${MAX_BODY_BYTES} bytes.` }, { status: 413 });
  let body: unknown;
  try {
    const text = await request.text();
    if (text.length > MAX_BODY_BYTES) return Response.json({ error: `The body is larger than ${MAX_BODY_BYTES} bytes.` }, { status: 413 });
    body = JSON.parse(text);
  } catch {
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
  // module never throws; a notice that cannot be sent is logged and retried.
  if (answer.sensorIds?.length) await notifyFailedVerdicts(answer.sensorIds);
  return Response.json(answer.body, { status: answer.status, headers: { "Cache-Control": "no-store", ...answer.headers } });
}
