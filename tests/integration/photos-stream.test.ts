// Issue 11: POST /api/photos streams the file part to a temporary file on disk (receiveMultipart)
// instead of holding up to 8 MiB in memory. A chunked body (no Content-Length) is fed as a stream
// that counts the bytes the server pulls: past PHOTO_MAX_BYTES the read stops (413), and the
// temporary folder (os.tmpdir()/shotbook-upload-*) is gone afterwards whatever the answer.
import { afterAll, beforeAll, expect, test } from "vitest";
import { createHash } from "node:crypto";
import { mkdtempSync, readdirSync, readFileSync, rmSync, statSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { MULTIPART_OVERHEAD } from "~/http/body.server";
import { photoMaxBytes } from "~/models/photos.server";
import { action as photoAction } from "~/routes/api.photos";
import { getEnv } from "~/env.server";
import { apiRequest, call, makeUser, type TestUser } from "../support/registry-fixtures";
import { syncedShot } from "../support/synced-shot";

const CHUNK = 4096;
const HUGE = 300 * 1024 * 1024;
const BOUNDARY = "----shotbook-photo-stream";
// ISO/IEC 10918-1: a JPEG starts with SOI (FF D8) and a marker (FF ..)
const JPEG_START = [0xff, 0xd8, 0xff, 0xe0];

let crew: TestUser;
let shotId: string;
// a private os.tmpdir() for this file, so other test files' uploads cannot disturb the count
const realTmp = process.env.TMPDIR;
let tmp: string;

beforeAll(async () => {
  tmp = mkdtempSync(join(tmpdir(), "shotbook-photos-stream-"));
  process.env.TMPDIR = tmp;
  crew = await makeUser("crew");
  const one = await syncedShot(crew);
  shotId = one.shotId;
  const a = one.sync;
  expect(a.json.results.map((r: { status: string }) => r.status)).toEqual(["accepted", "accepted"]);
});

afterAll(() => {
  if (realTmp === undefined) delete process.env.TMPDIR;
  else process.env.TMPDIR = realTmp;
  rmSync(tmp, { recursive: true, force: true });
});

const uploads = () => readdirSync(tmpdir()).filter((n) => n.startsWith("shotbook-upload-"));
/** Bytes on disk in the upload folders right now. */
const onDisk = () => uploads().reduce((sum, d) => sum + readdirSync(join(tmpdir(), d)).reduce((s, f) => s + statSync(join(tmpdir(), d, f)).size, 0), 0);

/**
 * A multipart body (shotId, then a file part of `fileBytes` bytes that starts like a JPEG),
 * produced only as it is pulled, counting what was pulled; `probeAt` bytes in, it records how
 * much of the upload is on disk at that moment.
 */
function photoBody(id: string, fileBytes: number, probeAt = Infinity) {
  const enc = new TextEncoder();
  const head = enc.encode(
    `--${BOUNDARY}\r\nContent-Disposition: form-data; name="shotId"\r\n\r\n${id}\r\n` +
      `--${BOUNDARY}\r\nContent-Disposition: form-data; name="file"; filename="board.jpg"\r\nContent-Type: image/jpeg\r\n\r\n`,
  );
  const tail = enc.encode(`\r\n--${BOUNDARY}--\r\n`);
  const counter = { pulled: 0, cancelled: false, onDiskAtProbe: -1 };
  const hash = createHash("sha256");
  let sent = 0; // file bytes produced so far
  let phase: "head" | "file" | "tail" | "done" = "head";
  const stream = new ReadableStream<Uint8Array>(
    {
      pull(controller) {
        if (counter.pulled >= probeAt && counter.onDiskAtProbe < 0) counter.onDiskAtProbe = onDisk();
        let chunk: Uint8Array;
        if (phase === "head") {
          chunk = head;
          phase = "file";
        } else if (phase === "file") {
          const n = Math.min(CHUNK, fileBytes - sent);
          chunk = new Uint8Array(n);
          // a varied payload (not all zeros) so the checksum would notice a lost or doubled chunk
          for (let i = 0; i < n; i++) chunk[i] = ((sent + i) * 31) % 251;
          if (sent === 0) chunk.set(JPEG_START);
          hash.update(chunk);
          sent += n;
          if (sent >= fileBytes) phase = "tail";
        } else if (phase === "tail") {
          chunk = tail;
          phase = "done";
        } else return controller.close();
        counter.pulled += chunk.byteLength;
        controller.enqueue(chunk);
      },
      cancel() {
        counter.cancelled = true;
      },
    },
    { highWaterMark: 0 },
  );
  // No Content-Length: a chunked upload, the case a length check alone misses.
  const request = new Request("http://localhost/api/photos", {
    method: "POST",
    body: stream,
    headers: { Authorization: `Bearer ${crew.token}`, "Content-Type": `multipart/form-data; boundary=${BOUNDARY}` },
    duplex: "half",
  } as RequestInit);
  return { request, counter, sha256: () => hash.digest("hex") };
}

test("a chunked photo upload far beyond PHOTO_MAX_BYTES is 413, stops pulling just past the cap, went to disk, and leaves no temporary folder", async () => {
  const before = uploads();
  expect(before).toEqual([]);
  const max = photoMaxBytes();
  const { request, counter } = photoBody(shotId, HUGE, 2 * 1024 * 1024);
  const a = await call(photoAction, request);
  expect(a.status).toBe(413);
  expect(a.json.error).toMatch(/larger than/);
  // it read up to the cap, and at most one chunk past the body cap (photo + multipart framing)
  expect(counter.pulled).toBeGreaterThan(max);
  expect(counter.pulled).toBeLessThanOrEqual(max + MULTIPART_OVERHEAD + CHUNK);
  expect(counter.cancelled).toBe(true);
  // 2 MiB in, the photo was going to a file, not into memory (well over 1 MiB of it on disk)
  expect(counter.onDiskAtProbe).toBeGreaterThan(1024 * 1024);
  expect(uploads()).toEqual(before);
});

test("a chunked photo within the cap is stored whole with its checksum; no temporary folder is left", async () => {
  const size = 3 * 1024 * 1024 + 123;
  const { request, counter, sha256 } = photoBody(shotId, size);
  const a = await call(photoAction, request);
  expect(a.status).toBe(201);
  const sha = sha256();
  expect(a.json.photo).toMatchObject({ shotId, contentType: "image/jpeg", bytes: size, sha256: sha });
  // the stored file is the bytes sent (checked by Node's own SHA-256, not the server's running hash)
  const stored = readFileSync(join(getEnv().DATA_DIR, "photos", `${a.json.photo.id}.jpg`));
  expect(stored.length).toBe(size);
  expect(createHash("sha256").update(stored).digest("hex")).toBe(sha);
  expect(counter.cancelled).toBe(false);
  expect(uploads()).toEqual([]);
});

test("refusals after the body was received (unknown shot 404, not an image 415) remove the temporary folder too", async () => {
  const unknown = photoBody("no-such-shot", 64 * 1024);
  expect((await call(photoAction, unknown.request)).status).toBe(404);
  expect(uploads()).toEqual([]);
  const form = new FormData();
  form.set("shotId", shotId);
  form.set("file", new File([new TextEncoder().encode("<html></html>")], "x.png", { type: "image/png" }));
  expect((await call(photoAction, apiRequest("/api/photos", { user: crew, method: "POST", body: form }))).status).toBe(415);
  expect(uploads()).toEqual([]);
});
