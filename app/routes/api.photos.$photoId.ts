// GET /api/photos/:photoId (any signed-in role): the image bytes. A photo never changes under
// its id, so browsers may keep it; the checksum is its ETag.
import { requireApiUser } from "~/auth/guards.server";
import { findPhoto, openPhoto } from "~/models/photos.server";
import type { Route } from "./+types/api.photos.$photoId";

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireApiUser(request);
  const row = await findPhoto(user, params.photoId);
  if (!row) return Response.json({ error: `No photo ${params.photoId}.` }, { status: 404 });
  const etag = `"${row.sha256}"`;
  const headers = {
    "Content-Type": row.contentType,
    "Cache-Control": "private, max-age=31536000, immutable",
    ETag: etag,
    "X-Content-Type-Options": "nosniff",
    "Content-Disposition": "inline",
  };
  if (request.headers.get("If-None-Match") === etag) return new Response(null, { status: 304, headers });
  const file = await openPhoto(row);
  // the row is here but not its file: a store this instance does not share (see STORAGE_URL)
  if (!file) return Response.json({ error: `The file of photo ${params.photoId} is not in this server's storage.` }, { status: 404 });
  return new Response(file.body, { headers: { ...headers, "Content-Length": String(row.bytes) } });
}
