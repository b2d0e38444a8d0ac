// POST /api/photos and GET /api/photos/:id: real tiny images (a 2×2 JPEG and PNG written by
// Chromium's canvas encoder), type by magic bytes, size limit, checksum, same photo twice.
import { beforeAll, expect, test } from "vitest";
import { createHash } from "node:crypto";
import { existsSync } from "node:fs";
import { join } from "node:path";
import { action as photoAction, loader as photoList } from "~/routes/api.photos";
import { loader as photoLoader } from "~/routes/api.photos.$photoId";
import { loader as shotsLoader } from "~/routes/api.shots";
import { getEnv, resetEnvCache } from "~/env.server";
import { apiRequest, call, makeUser, type TestUser } from "../support/registry-fixtures";
import { syncedShot } from "../support/synced-shot";

const JPEG = Buffer.from(
  "/9j/4AAQSkZJRgABAQAAAQABAAD/4gHYSUNDX1BST0ZJTEUAAQEAAAHIAAAAAAQwAABtbnRyUkdCIFhZWiAH4AABAAEAAAAAAABhY3NwAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAQAA9tYAAQAAAADTLQAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAlkZXNjAAAA8AAAACRyWFlaAAABFAAAABRnWFlaAAABKAAAABRiWFlaAAABPAAAABR3dHB0AAABUAAAABRyVFJDAAABZAAAAChnVFJDAAABZAAAAChiVFJDAAABZAAAAChjcHJ0AAABjAAAADxtbHVjAAAAAAAAAAEAAAAMZW5VUwAAAAgAAAAcAHMAUgBHAEJYWVogAAAAAAAAb6IAADj1AAADkFhZWiAAAAAAAABimQAAt4UAABjaWFlaIAAAAAAAACSgAAAPhAAAts9YWVogAAAAAAAA9tYAAQAAAADTLXBhcmEAAAAAAAQAAAACZmYAAPKnAAANWQAAE9AAAApbAAAAAAAAAABtbHVjAAAAAAAAAAEAAAAMZW5VUwAAACAAAAAcAEcAbwBvAGcAbABlACAASQBuAGMALgAgADIAMAAxADb/2wBDAAYEBQYFBAYGBQYHBwYIChAKCgkJChQODwwQFxQYGBcUFhYaHSUfGhsjHBYWICwgIyYnKSopGR8tMC0oMCUoKSj/2wBDAQcHBwoIChMKChMoGhYaKCgoKCgoKCgoKCgoKCgoKCgoKCgoKCgoKCgoKCgoKCgoKCgoKCgoKCgoKCgoKCgoKCj/wAARCAACAAIDASIAAhEBAxEB/8QAFQABAQAAAAAAAAAAAAAAAAAAAAH/xAAUEAEAAAAAAAAAAAAAAAAAAAAA/8QAFQEBAQAAAAAAAAAAAAAAAAAAAwb/xAAUEQEAAAAAAAAAAAAAAAAAAAAA/9oADAMBAAIRAxEAPwCgBQD/2Q==",
  "base64",
);
const PNG = Buffer.from("iVBORw0KGgoAAAANSUhEUgAAAAIAAAACCAYAAABytg0kAAAAEklEQVR4AWIyXlX+H4SZGKAAAAAA///5ejD3AAAABklEQVQDADzYBKuqbfebAAAAAElFTkSuQmCC", "base64");

let crew: TestUser;
let viewer: TestUser;
let shotId: string;

beforeAll(async () => {
  [crew, viewer] = await Promise.all([makeUser("crew"), makeUser("viewer")]);
  // issue 14: the readers are members of the project the shots belong to
  const one = await syncedShot(crew, [viewer]);
  shotId = one.shotId;
  const a = one.sync;
  expect(a.json.results.map((r: { status: string }) => r.status)).toEqual(["accepted", "accepted"]);
});

function upload(user: TestUser | undefined, bytes: Uint8Array<ArrayBuffer>, type: string, id = shotId, name = "photo") {
  const form = new FormData();
  form.set("shotId", id);
  form.set("file", new File([bytes], name, { type }));
  return call(photoAction, apiRequest("/api/photos", { user, method: "POST", body: form }));
}

test("a JPEG is stored under DATA_DIR/photos with its checksum; the same photo again is 200 with the same id", async () => {
  const a = await upload(crew, JPEG, "image/jpeg", shotId, "board.jpg");
  expect(a.status).toBe(201);
  const sha = createHash("sha256").update(JPEG).digest("hex");
  expect(a.json.photo).toMatchObject({ shotId, contentType: "image/jpeg", bytes: JPEG.length, sha256: sha });
  expect(existsSync(join(getEnv().DATA_DIR, "photos", `${a.json.photo.id}.jpg`))).toBe(true);
  const again = await upload(crew, JPEG, "image/jpeg");
  expect(again.status).toBe(200);
  expect(again.json.photo.id).toBe(a.json.photo.id);
  const list = await call(photoList, apiRequest(`/api/photos?shotId=${shotId}`, { user: viewer }));
  expect(list.json.photos.map((p: { id: string }) => p.id)).toEqual([a.json.photo.id]);
  const shotRow = (await call(shotsLoader, apiRequest(`/api/shots?limit=1000`, { user: viewer }))).json.shots.find((s: { id: string }) => s.id === shotId);
  expect(shotRow.photoIds).toEqual([a.json.photo.id]);
});

test("GET serves the bytes with the sniffed type, long private caching and the checksum as ETag", async () => {
  // declared as JPEG but the bytes are PNG: the bytes decide
  const up = await upload(crew, PNG, "image/jpeg");
  expect(up.status).toBe(201);
  expect(up.json.photo.contentType).toBe("image/png");
  const id = up.json.photo.id;
  const res = (await photoLoader({ request: apiRequest(`/api/photos/${id}`, { user: viewer }), params: { photoId: id }, context: {} } as never)) as Response;
  expect(res.status).toBe(200);
  expect(res.headers.get("Content-Type")).toBe("image/png");
  expect(res.headers.get("Cache-Control")).toMatch(/private.*max-age=\d+/);
  expect(res.headers.get("X-Content-Type-Options")).toBe("nosniff");
  expect(Buffer.from(await res.arrayBuffer()).equals(PNG)).toBe(true);
  const etag = res.headers.get("ETag")!;
  expect(etag).toBe(`"${createHash("sha256").update(PNG).digest("hex")}"`);
  const cached = (await photoLoader({ request: apiRequest(`/api/photos/${id}`, { user: viewer, headers: { "If-None-Match": etag } }), params: { photoId: id }, context: {} } as never)) as Response;
  expect(cached.status).toBe(304);
  expect((await call(photoLoader, apiRequest(`/api/photos/${id}`), { photoId: id })).status).toBe(401);
  expect((await call(photoLoader, apiRequest(`/api/photos/nope`, { user: viewer }), { photoId: "nope" })).status).toBe(404);
});

test("a file that is not an image is refused 415 even when it claims to be one", async () => {
  const html = new TextEncoder().encode("<html><script>alert(1)</script></html>");
  expect((await upload(crew, html, "image/png")).status).toBe(415);
  expect((await upload(crew, html, "text/html")).status).toBe(415);
  const pdf = new TextEncoder().encode("%PDF-1.7\n...");
  expect((await upload(crew, pdf, "application/pdf")).status).toBe(415);
});

test("a photo above PHOTO_MAX_BYTES is refused 413; unknown shot 404; viewer may not upload", async () => {
  const before = process.env.PHOTO_MAX_BYTES;
  process.env.PHOTO_MAX_BYTES = "1024";
  resetEnvCache();
  try {
    const big = new Uint8Array(2048);
    big.set(JPEG.subarray(0, 4));
    const a = await upload(crew, big, "image/jpeg");
    expect(a.status).toBe(413);
    expect(a.json.error).toMatch(/1024 bytes/);
  } finally {
    if (before === undefined) delete process.env.PHOTO_MAX_BYTES;
    else process.env.PHOTO_MAX_BYTES = before;
    resetEnvCache();
  }
  expect((await upload(crew, JPEG, "image/jpeg", "no-such-shot")).status).toBe(404);
  expect((await upload(viewer, JPEG, "image/jpeg")).status).toBe(403);
  expect((await upload(undefined, JPEG, "image/jpeg")).status).toBe(401);
  const form = new FormData();
  form.set("shotId", shotId);
  expect((await call(photoAction, apiRequest("/api/photos", { user: crew, method: "POST", body: form }))).status).toBe(400);
});
