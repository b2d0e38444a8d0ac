// POST /api/photos (crew, qa, admin): multipart shotId + file → 201 { photo } (200 when the
// same shot already has this photo). GET /api/photos?shotId=… (any signed-in role) lists them.
import { requireApiUser } from "~/auth/guards.server";
import { FIELD } from "~/auth/access";
import { DatabaseUnavailable, retryTransient, unavailableResponse } from "~/db/transient.server";
import { listPhotos, photoMaxBytes, savePhoto } from "~/models/photos.server";
import type { Route } from "./+types/api.photos";
import { MULTIPART_OVERHEAD, tooLarge } from "~/http/body.server";
import { discard, receiveMultipart } from "~/utils/multipart.server";

export async function action({ request }: Route.ActionArgs) {
  const user = await requireApiUser(request, FIELD);
  if (request.method !== "POST") return Response.json({ error: "Use POST." }, { status: 405, headers: { Allow: "POST" } });
  const max = photoMaxBytes();
  // streamed to a temporary file: the photo is never held whole in memory (issue 11)
  const form = await receiveMultipart(request, { maxBytes: max, maxFiles: 1, maxBodyBytes: max + MULTIPART_OVERHEAD });
  if ("status" in form) {
    if (form.status === 413) {
      return form.limit === "files" ? Response.json({ error: `The photo is larger than ${max} bytes.` }, { status: 413 }) : tooLarge(request, max + MULTIPART_OVERHEAD);
    }
    return Response.json({ error: "Send multipart form data with shotId and file.", errors: [{ path: "body", message: form.error }] }, { status: 400 });
  }
  let result: Awaited<ReturnType<typeof savePhoto>>;
  try {
    const file = form.files.find((f) => f.field === "file");
    // repeatable: the same shot and checksum again is the same photo
    result = await retryTransient(() => savePhoto(user, form.fields.get("shotId"), file));
  } catch (e) {
    if (e instanceof DatabaseUnavailable) return unavailableResponse(e);
    throw e;
  } finally {
    await discard(form);
  }
  return Response.json(result.body, { status: result.status });
}

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireApiUser(request);
  const shotId = new URL(request.url).searchParams.get("shotId");
  if (!shotId) return Response.json({ error: "Give shotId.", errors: [{ path: "shotId", message: "shotId is required" }] }, { status: 400 });
  const list = await listPhotos(user, shotId);
  // issue 14: an unknown shot and one outside the reader's projects answer alike
  if (!list) return Response.json({ error: `No shot ${shotId}.` }, { status: 404 });
  return Response.json({ photos: list }, { headers: { "Cache-Control": "private, no-store" } });
}
