// Shot photos: image types recognised by their magic bytes (the declared type is not trusted),
// a size limit (PHOTO_MAX_BYTES), a SHA-256 checksum, files in the object store under
// "photos/" (DATA_DIR/photos by default; STORAGE_URL for one store shared by every instance).
// The same shot and checksum again is the same photo (the outbox may resend after a dropped answer).
import { createReadStream } from "node:fs";
import { open } from "node:fs/promises";
import { resolve } from "node:path";
import { Readable } from "node:stream";
import { and, asc, eq } from "drizzle-orm";
import { getDb, type Db } from "~/db/client.server";
import { photos, shots } from "~/db/schema";
import { getEnv } from "~/env.server";
import { getStore } from "~/storage/store.server";
import type { Actor } from "./actor";
import { scopeOf, sessionIdInScope, shotIdInScope } from "./scope.server";

export type PhotoJson = { id: string; shotId: string; contentType: string; bytes: number; sha256: string; createdAt: string; url: string };
type Answer = { status: 200 | 201; body: { photo: PhotoJson } } | { status: 400 | 404 | 413 | 415; body: { error: string; errors?: { path: string; message: string }[] } };

/** Signatures of the image types a tablet camera writes (ISO/IEC 10918 JPEG, PNG, WebP, HEIF/AVIF). */
export function sniffImageType(b: Uint8Array): { type: string; ext: string } | null {
  const at = (i: number, ...xs: number[]) => xs.every((x, k) => b[i + k] === x);
  const ascii = (i: number, s: string) => at(i, ...[...s].map((c) => c.charCodeAt(0)));
  if (b.length >= 3 && at(0, 0xff, 0xd8, 0xff)) return { type: "image/jpeg", ext: "jpg" };
  if (b.length >= 8 && at(0, 0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a)) return { type: "image/png", ext: "png" };
  if (b.length >= 12 && ascii(0, "RIFF") && ascii(8, "WEBP")) return { type: "image/webp", ext: "webp" };
  if (b.length >= 12 && ascii(4, "ftyp")) {
    const brand = String.fromCharCode(...b.slice(8, 12));
    if (brand === "avif" || brand === "avis") return { type: "image/avif", ext: "avif" };
    if (["heic", "heix", "heim", "heis", "mif1", "msf1"].includes(brand)) return { type: "image/heic", ext: "heic" };
  }
  return null;
}

/** The folder of the embedded default store (STORAGE_URL unset). */
export function photosDir() {
  return resolve(getEnv().DATA_DIR, "photos");
}

function toJson(r: { id: string; shotId: string; contentType: string; bytes: number; sha256: string; createdAt: string }): PhotoJson {
  return { ...r, url: `/api/photos/${r.id}` };
}

const cols = { id: photos.id, shotId: photos.shotId, contentType: photos.contentType, bytes: photos.bytes, sha256: photos.sha256, createdAt: photos.createdAt };

export function photoMaxBytes() {
  return getEnv().PHOTO_MAX_BYTES;
}

/** The photo as received: a temporary file on disk (see receiveMultipart), its size and checksum. */
export type ReceivedPhoto = { path: string; bytes: number; sha256: string; type: string };

async function firstBytes(path: string, n: number) {
  const fh = await open(path, "r");
  try {
    const buf = new Uint8Array(n);
    const { bytesRead } = await fh.read(buf, 0, n, 0);
    return buf.subarray(0, bytesRead);
  } finally {
    await fh.close();
  }
}

/**
 * Checks and stores one received photo. The file stays where receiveMultipart wrote it (the
 * caller removes that folder); it is read from disk, never held whole in memory.
 */
export async function savePhoto(actor: Actor, shotId: unknown, file: ReceivedPhoto | null | undefined, db: Db = getDb()): Promise<Answer> {
  const errors: { path: string; message: string }[] = [];
  if (typeof shotId !== "string" || !shotId) errors.push({ path: "shotId", message: "shotId is required" });
  if (!file) errors.push({ path: "file", message: "file is required (a photo as multipart form data)" });
  if (errors.length || !file) return { status: 400, body: { error: "Send multipart form data with shotId and file.", errors } };
  const max = photoMaxBytes();
  if (file.bytes > max) return { status: 413, body: { error: `The photo is larger than ${max} bytes.` } };
  if (file.bytes === 0) return { status: 400, body: { error: "The photo is empty.", errors: [{ path: "file", message: "the file is empty" }] } };
  // busboy names a part with no Content-Type "text/plain": that is no declaration, the bytes decide
  const declared = file.type === "text/plain" ? "" : file.type;
  if (declared && !declared.startsWith("image/") && declared !== "application/octet-stream") {
    return { status: 415, body: { error: `Only images are accepted (the file says ${declared}).` } };
  }
  const kind = sniffImageType(await firstBytes(file.path, 16));
  if (!kind) return { status: 415, body: { error: "Only JPEG, PNG, WebP, HEIC or AVIF images are accepted; this file's content is none of them." } };

  // issue 14: a shot outside the actor's projects answers as an unknown one
  const scope = await scopeOf(actor, db);
  const [shot] = await db
    .select({ id: shots.id })
    .from(shots)
    .where(and(eq(shots.id, shotId as string), sessionIdInScope(scope, shots.sessionId)));
  if (!shot) return { status: 404, body: { error: `No shot ${shotId as string}: sync the shot before its photo.` } };

  const sha256 = file.sha256;
  const same = () =>
    db
      .select(cols)
      .from(photos)
      .where(and(eq(photos.shotId, shot.id), eq(photos.sha256, sha256)));
  const [existing] = await same();
  if (existing) return { status: 200, body: { photo: toJson(existing) } };

  const id = crypto.randomUUID();
  const name = `${id}.${kind.ext}`;
  const store = getStore();
  // the file first, then its row: a row never points at a file that is not there
  await store.put(photoKey(name), Readable.toWeb(createReadStream(file.path)) as ReadableStream<Uint8Array>, { contentType: kind.type, bytes: file.bytes });
  try {
    const [row] = await db.insert(photos).values({ id, shotId: shot.id, contentType: kind.type, bytes: file.bytes, sha256, path: name, uploadedBy: actor.id }).returning(cols);
    return { status: 201, body: { photo: toJson(row!) } };
  } catch (e) {
    // the same photo arriving twice at once: the unique (shot, sha256) index keeps one
    await store.delete(photoKey(name));
    const [again] = await same();
    if (again) return { status: 200, body: { photo: toJson(again) } };
    throw e;
  }
}

/** Stored names are ours (uuid.ext); never a path from the request. */
const photoKey = (name: string) => `photos/${name.replace(/[/\\]/g, "")}`;

/** The photos of a shot; null when the shot is unknown or outside the actor's projects (404 either way). */
export async function listPhotos(actor: Actor, shotId: string, db: Db = getDb()): Promise<PhotoJson[] | null> {
  const scope = await scopeOf(actor, db);
  const [shot] = await db
    .select({ id: shots.id })
    .from(shots)
    .where(and(eq(shots.id, shotId), sessionIdInScope(scope, shots.sessionId)));
  if (!shot) return null;
  const rows = await db.select(cols).from(photos).where(eq(photos.shotId, shotId)).orderBy(asc(photos.createdAt), asc(photos.id));
  return rows.map(toJson);
}

export async function findPhoto(actor: Actor, photoId: string, db: Db = getDb()) {
  const scope = await scopeOf(actor, db);
  const [row] = await db
    .select({ ...cols, path: photos.path })
    .from(photos)
    .where(and(eq(photos.id, photoId), shotIdInScope(scope, photos.shotId)));
  return row ?? null;
}

export type PhotoRow = NonNullable<Awaited<ReturnType<typeof findPhoto>>>;

/** The photo's bytes as a stream, or null when the store has no file of that size for it. */
export async function openPhoto(row: PhotoRow) {
  const found = await getStore().get(photoKey(row.path));
  if (!found) return null;
  if (found.bytes !== row.bytes) {
    // not the file that was checked in: never serve it under the stored type and checksum
    await found.body.cancel();
    return null;
  }
  return found;
}

export async function readPhoto(actor: Actor, photoId: string, db: Db = getDb()) {
  const row = await findPhoto(actor, photoId, db);
  if (!row) return null;
  const file = await openPhoto(row);
  return file ? { row, body: file.body, bytes: file.bytes } : null;
}
