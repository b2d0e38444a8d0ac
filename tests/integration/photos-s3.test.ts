// Photos in an S3-compatible object store (STORAGE_URL), against s3rver, a local fake of the
// S3 API: the upload lands in the bucket (not in DATA_DIR), the download keeps the sniffed
// type, size and checksum headers, and the embedded default is unchanged when STORAGE_URL is unset.
import { afterAll, beforeAll, expect, test } from "vitest";
import { createHash } from "node:crypto";
import { existsSync, mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { GetObjectCommand, ListObjectsV2Command, S3Client } from "@aws-sdk/client-s3";
import S3rver from "s3rver";
import { action as photoAction } from "~/routes/api.photos";
import { loader as photoLoader } from "~/routes/api.photos.$photoId";
import { getEnv, resetEnvCache } from "~/env.server";
import { parseStorageUrl } from "~/storage/url";
import { apiRequest, call, makeUser, type TestUser } from "../support/registry-fixtures";
import { syncedShot } from "../support/synced-shot";
import { freePort } from "../support/ports";

// a 1×1 PNG (written by Chromium's canvas encoder)
const PNG = Buffer.from("iVBORw0KGgoAAAANSUhEUgAAAAIAAAACCAYAAABytg0kAAAAEklEQVR4AWIyXlX+H4SZGKAAAAAA///5ejD3AAAABklEQVQDADzYBKuqbfebAAAAAElFTkSuQmCC", "base64");

let server: S3rver;
let dir: string;
let endpoint: string;
let crew: TestUser;
let shotId: string;
const saved = { url: process.env.STORAGE_URL, id: process.env.STORAGE_ACCESS_KEY_ID, secret: process.env.STORAGE_SECRET_ACCESS_KEY };

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), "shotbook-s3-"));
  const port = await freePort();
  server = new S3rver({ port, address: "127.0.0.1", silent: true, directory: dir, configureBuckets: [{ name: "shotbook", configs: [] }] });
  await server.run();
  endpoint = `http://127.0.0.1:${port}`;
  // s3rver's fixed keys
  process.env.STORAGE_URL = `s3://shotbook/tests?endpoint=${endpoint}&forcePathStyle=true`;
  process.env.STORAGE_ACCESS_KEY_ID = "S3RVER";
  process.env.STORAGE_SECRET_ACCESS_KEY = "S3RVER";
  resetEnvCache();
  crew = await makeUser("crew");
  const one = await syncedShot(crew);
  shotId = one.shotId;
  const a = one.sync;
  expect(a.json.results.map((r: { status: string }) => r.status)).toEqual(["accepted", "accepted"]);
});

afterAll(async () => {
  for (const [k, v] of [
    ["STORAGE_URL", saved.url],
    ["STORAGE_ACCESS_KEY_ID", saved.id],
    ["STORAGE_SECRET_ACCESS_KEY", saved.secret],
  ] as const) {
    if (v === undefined) delete process.env[k];
    else process.env[k] = v;
  }
  resetEnvCache();
  await server?.close();
  rmSync(dir, { recursive: true, force: true });
});

test("a photo uploaded with STORAGE_URL set lands in the bucket, not under DATA_DIR, and is served with its type, size and checksum", async () => {
  const form = new FormData();
  form.set("shotId", shotId);
  form.set("file", new File([PNG], "board.png", { type: "image/png" }));
  const up = await call(photoAction, apiRequest("/api/photos", { user: crew, method: "POST", body: form }));
  expect(up.status).toBe(201);
  const id = up.json.photo.id as string;
  expect(existsSync(join(getEnv().DATA_DIR, "photos", `${id}.png`))).toBe(false);

  // read the bucket with a client of its own: the object is there, byte for byte
  const s3 = new S3Client({ region: "us-east-1", endpoint, forcePathStyle: true, credentials: { accessKeyId: "S3RVER", secretAccessKey: "S3RVER" } });
  const listed = await s3.send(new ListObjectsV2Command({ Bucket: "shotbook", Prefix: "tests/photos/" }));
  expect(listed.Contents?.map((o) => o.Key)).toContain(`tests/photos/${id}.png`);
  const obj = await s3.send(new GetObjectCommand({ Bucket: "shotbook", Key: `tests/photos/${id}.png` }));
  expect(Buffer.from(await obj.Body!.transformToByteArray()).equals(PNG)).toBe(true);
  expect(obj.ContentType).toBe("image/png");
  s3.destroy();

  const res = (await photoLoader({ request: apiRequest(`/api/photos/${id}`, { user: crew }), params: { photoId: id }, context: {} } as never)) as Response;
  expect(res.status).toBe(200);
  expect(res.headers.get("Content-Type")).toBe("image/png");
  expect(res.headers.get("Content-Length")).toBe(String(PNG.length));
  expect(res.headers.get("ETag")).toBe(`"${createHash("sha256").update(PNG).digest("hex")}"`);
  expect(Buffer.from(await res.arrayBuffer()).equals(PNG)).toBe(true);
});

test("STORAGE_URL is checked at boot with a message naming what is wrong", () => {
  expect(() => parseStorageUrl("https://bucket")).toThrow(/must start with s3:\/\//);
  expect(() => parseStorageUrl("s3://Bad_Bucket")).toThrow(/no valid bucket/);
  expect(() => parseStorageUrl("s3://shotbook?endpoint=ftp://x")).toThrow(/endpoint must be an http/);
  expect(() => parseStorageUrl("s3://shotbook?pathstyle=1")).toThrow(/unknown option pathstyle/);
  expect(parseStorageUrl("s3://shotbook/firm-a?endpoint=http://127.0.0.1:4569&forcePathStyle=true")).toEqual({
    bucket: "shotbook",
    prefix: "firm-a/",
    endpoint: "http://127.0.0.1:4569",
    region: "us-east-1",
    forcePathStyle: true,
  });
  const before = process.env.STORAGE_URL;
  process.env.STORAGE_URL = "s3://x";
  resetEnvCache();
  try {
    expect(() => getEnv()).toThrow(/STORAGE_URL/);
  } finally {
    process.env.STORAGE_URL = before;
    resetEnvCache();
  }
});

test("a photo of several MiB streams into the bucket byte for byte", async () => {
  const big = new Uint8Array(3 * 1024 * 1024 + 77);
  for (let i = 0; i < big.length; i++) big[i] = (i * 31) % 251;
  big.set(PNG.subarray(0, 16));
  const form = new FormData();
  form.set("shotId", shotId);
  form.set("file", new File([big], "board.png", { type: "image/png" }));
  const up = await call(photoAction, apiRequest("/api/photos", { user: crew, method: "POST", body: form }));
  expect(up.status).toBe(201);
  const id = up.json.photo.id as string;
  const s3 = new S3Client({ region: "us-east-1", endpoint, forcePathStyle: true, credentials: { accessKeyId: "S3RVER", secretAccessKey: "S3RVER" } });
  const obj = await s3.send(new GetObjectCommand({ Bucket: "shotbook", Key: `tests/photos/${id}.png` }));
  const got = Buffer.from(await obj.Body!.transformToByteArray());
  s3.destroy();
  // checked by Node's own SHA-256 against the bytes sent
  expect(got.length).toBe(big.length);
  expect(createHash("sha256").update(got).digest("hex")).toBe(createHash("sha256").update(big).digest("hex"));
});
