// POST /api/frames (crew, qa, admin; api.md v1.1): multipart sessionId, targetId, box
// "u0,v0,u1,v1", referenceM or reference (JSON), one or more `depth` PNGs or N `correlation`
// PNGs with frequencyHz, optional commit → { fileSha256, targets: [one row] }.
import { requireApiUser } from "~/auth/guards.server";
import { FIELD } from "~/auth/access";
import { importFrames } from "~/models/scans.server";
import { FRAMES_MAX_FILES, SCAN_MAX_BYTES } from "~/models/scan-schemas";
import { discard, receiveMultipart } from "~/utils/multipart.server";
import type { Route } from "./+types/api.frames";

export async function action({ request }: Route.ActionArgs) {
  const user = await requireApiUser(request, FIELD);
  if (request.method !== "POST") return Response.json({ error: "Use POST." }, { status: 405, headers: { Allow: "POST" } });
  const form = await receiveMultipart(request, { maxBytes: SCAN_MAX_BYTES, maxFiles: FRAMES_MAX_FILES });
  if ("error" in form) return Response.json({ error: form.error }, { status: form.status });
  try {
    const result = await importFrames(user, Object.fromEntries(form.fields), form.files);
    return Response.json(result.body, { status: result.status, headers: { "Cache-Control": "no-store" } });
  } finally {
    await discard(form);
  }
}
