// GET /api/photos/:photoId (any signed-in role): the image bytes. A photo never changes under
// its id, so browsers may keep it; the checksum is its ETag.
import { requireApiUser } from "~/auth/guards.server";
import { readPhoto } from "~/models/photos.server";
import type { Route } from "./+types/api.photos.$photoId";

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireApiUser(request);
  const found = await readPhoto(user, params.photoId);
  if (!found) return Response.json({ error: `No photo ${params.photoId}.` }, { status: 404 });
  const etag = `"${found.row.sha256}"`;
  const headers = {
    "Content-Type": found.row.contentType,
    "Cache-Control": "private, max-age=31536000, immutable",
    ETag: etag,
    "X-Content-Type-Options": "nosniff",
    "Content-Disposition": "inline",
  };
  if (request.headers.get("If-None-Match") === etag) return new Response(null, { status: 304, headers });
  return new Response(found.data, { headers: { ...headers, "Content-Length": String(found.data.length) } });
}
