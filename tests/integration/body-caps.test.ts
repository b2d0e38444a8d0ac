// Issue 11: every request body is capped before it is read (api.md: sign-in forms 16 KB, sync
// 8 MB, photos 8 MiB; the import chunk 8 MB). A body is fed as a stream that counts the bytes
// the server pulls: past the cap the read must stop (413), not take in 300 MB first.
import { beforeAll, expect, test } from "vitest";
import { getDb } from "~/db/client.server";
import { users } from "~/db/schema";
import { BODY_LIMITS, MULTIPART_OVERHEAD } from "~/http/body.server";
import { photoMaxBytes } from "~/models/photos.server";
import * as apiPhotos from "~/routes/api.photos";
import * as apiSync from "~/routes/api.sync";
import * as importChunk from "~/routes/review.import.chunk";
import * as login from "~/routes/login";
import * as logout from "~/routes/logout";
import * as theme from "~/routes/theme";
import * as adminSensorsNew from "~/routes/admin.sensors.new";
import { answerOf, args } from "./auth-helpers";
import { makeUser, type TestUser } from "../support/registry-fixtures";

const CHUNK = 4096;
const HUGE = 300 * 1024 * 1024;

/** A body of `total` bytes that is produced only as it is pulled, counting what was pulled. */
function countingBody(total: number, byte = 0x61) {
  const counter = { pulled: 0, cancelled: false };
  const stream = new ReadableStream<Uint8Array>(
    {
      pull(controller) {
        if (counter.pulled >= total) return controller.close();
        const n = Math.min(CHUNK, total - counter.pulled);
        counter.pulled += n;
        controller.enqueue(new Uint8Array(n).fill(byte));
      },
      cancel() {
        counter.cancelled = true;
      },
    },
    { highWaterMark: 0 },
  );
  return { stream, counter };
}

function streamed(path: string, total: number, headers: Record<string, string> = {}) {
  const { stream, counter } = countingBody(total);
  // No Content-Length: a chunked upload, the case a length check alone misses.
  const request = new Request(`http://localhost${path}`, { method: "POST", body: stream, headers, duplex: "half" } as RequestInit);
  return { request, counter };
}

function declared(path: string, length: number, headers: Record<string, string> = {}) {
  const { stream, counter } = countingBody(length);
  const request = new Request(`http://localhost${path}`, {
    method: "POST",
    body: stream,
    headers: { ...headers, "Content-Length": String(length) },
    duplex: "half",
  } as RequestInit);
  return { request, counter };
}

let crew: TestUser;
let admin: TestUser;
beforeAll(async () => {
  await getDb().insert(users).values({ email: "quinn.qa@fernhollow.test", role: "qa" });
  crew = await makeUser("crew");
  admin = await makeUser("admin");
});

const FORM = { "Content-Type": "application/x-www-form-urlencoded" };

test("an anonymous 300 MB sign-in form is refused after reading at most the 16 KB cap", async () => {
  const { request, counter } = streamed("/login", HUGE, FORM);
  const a = await answerOf(() => login.action(args(request)));
  expect(a.status).toBe(413);
  expect(String(a.body)).toMatch(/larger than 16 KB/);
  expect(counter.pulled).toBeLessThanOrEqual(BODY_LIMITS.form + CHUNK);
  expect(counter.cancelled).toBe(true);
});

test("the theme switch, sign-out and an admin form stop reading at 16 KB too", async () => {
  for (const [fn, path, hdrs] of [
    [theme.action, "/theme", FORM],
    [logout.action, "/logout", FORM],
    [adminSensorsNew.action, "/admin/sensors/new", { ...FORM, Authorization: `Bearer ${admin.token}` }],
  ] as const) {
    const { request, counter } = streamed(path, HUGE, hdrs);
    const a = await answerOf(() => (fn as (x: unknown) => Promise<unknown>)(args(request)));
    expect(a.status, path).toBe(413);
    expect(counter.pulled, path).toBeLessThanOrEqual(BODY_LIMITS.form + CHUNK);
  }
});

test("POST /api/sync, /api/photos and the import chunk stop reading at their caps", async () => {
  const bearer = { Authorization: `Bearer ${crew.token}` };
  const cases = [
    [apiSync.action, "/api/sync", { ...bearer, "Content-Type": "application/json" }, BODY_LIMITS.sync],
    [importChunk.action, "/review/import/chunk", { ...bearer, "Content-Type": "application/json" }, BODY_LIMITS.importChunk],
    [apiPhotos.action, "/api/photos", { ...bearer, "Content-Type": "multipart/form-data; boundary=x" }, photoMaxBytes() + MULTIPART_OVERHEAD],
  ] as const;
  for (const [fn, path, hdrs, cap] of cases) {
    const { request, counter } = streamed(path, HUGE, hdrs);
    const a = await answerOf(() => (fn as (x: unknown) => Promise<unknown>)(args(request)));
    expect(a.status, path).toBe(413);
    expect((a.body as { error: string }).error, path).toMatch(/larger than/);
    expect(counter.pulled, path).toBeGreaterThan(cap - CHUNK);
    expect(counter.pulled, path).toBeLessThanOrEqual(cap + CHUNK);
  }
});

test("an oversize Content-Length is answered 413 before a single byte is read", async () => {
  const bearer = { Authorization: `Bearer ${crew.token}` };
  const cases = [
    [login.action, "/login", FORM, BODY_LIMITS.form + 1],
    [theme.action, "/theme", FORM, HUGE],
    [apiSync.action, "/api/sync", { ...bearer, "Content-Type": "application/json" }, BODY_LIMITS.sync + 1],
    [importChunk.action, "/review/import/chunk", { ...bearer, "Content-Type": "application/json" }, BODY_LIMITS.importChunk + 1],
    [apiPhotos.action, "/api/photos", { ...bearer, "Content-Type": "multipart/form-data; boundary=x" }, photoMaxBytes() + MULTIPART_OVERHEAD + 1],
  ] as const;
  for (const [fn, path, hdrs, length] of cases) {
    const { request, counter } = declared(path, length, hdrs);
    const a = await answerOf(() => (fn as (x: unknown) => Promise<unknown>)(args(request)));
    expect(a.status, path).toBe(413);
    expect(counter.pulled, path).toBe(0);
  }
});

test("a body within its cap is read as before", async () => {
  const a = await answerOf(() => theme.action(args(new Request("http://localhost/theme", { method: "POST", headers: FORM, body: new URLSearchParams({ theme: "dark", redirectTo: "/review" }) }))));
  expect(a.status).toBe(302);
  expect(a.location).toBe("/review");
});
