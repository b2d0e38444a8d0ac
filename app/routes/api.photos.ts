// POST /api/photos (crew, qa, admin): multipart shotId + file → 201 { photo } (200 when the
// same shot already has this photo). GET /api/photos?shotId=… (any signed-in role) lists them.
import { requireApiUser } from "~/auth/guards.server";
import { FIELD } from "~/auth/access";
import { DatabaseUnavailable, retryTransient, unavailableResponse } from "~/db/transient.server";
import { listPhotos, photoMaxBytes, savePhoto } from "~/models/photos.server";
import type { Route } from "./+types/api.photos";
import { MULTIPART_OVERHEAD, readFormCapped } from "~/http/body.server";

export async function action({ request }: Route.ActionArgs) {
  const user = await requireApiUser(request, FIELD);
  if (request.method !== "POST") return Response.json({ error: "Use POST." }, { status: 405, headers: { Allow: "POST" } });
  let form: FormData;
  try {
    form = await readFormCapped(request, photoMaxBytes() + MULTIPART_OVERHEAD);
  } catch (e) {
    if (e instanceof Response) return e;
    return Response.json({ error: "Send multipart form data with shotId and file." }, { status: 400 });
  }
  let result: Awaited<ReturnType<typeof savePhoto>>;
  try {
    // repeatable: the same shot and checksum again is the same photo
    result = await retryTransient(() => savePhoto(user, form.get("shotId"), form.get("file")));
  } catch (e) {
    if (e instanceof DatabaseUnavailable) return unavailableResponse(e);
    throw e;
  }
  return Response.json(result.body, { status: result.status });
}

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireApiUser(request);
  const shotId = new URL(request.url).searchParams.get("shotId");
  if (!shotId) return Response.json({ error: "Give shotId.", errors: [{ path: "shotId", message: "shotId is required" }] }, { status: 400 });
  return Response.json({ photos: await listPhotos(user, shotId) }, { headers: { "Cache-Control": "private, no-store" } });
}
