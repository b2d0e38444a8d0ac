// GET /api/shots (cursor paging, filters), GET /api/shots.geojson and the exclusion route, on
// shots synced through the real action. Limits and bands are worked out here from ranging.md
// §4–5 (T = a + b·D/1000, L = k·T; range bands [lower, upper)).
import { beforeAll, expect, test } from "vitest";
import { and, eq } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { auditLog, exclusions, shots as shotsTable } from "~/db/schema";
import { action as syncAction } from "~/routes/api.sync";
import { loader as shotsLoader } from "~/routes/api.shots";
import { loader as geoLoader } from "~/routes/api.shots[.]geojson";
import { loader as reportLoader } from "~/routes/api.sensors.$sensorId.report";
import { action as exclusionAction } from "~/routes/api.shots.$shotId.exclusion";
import { apiRequest, call, makeSensor, makeSite, makeUser, type TestUser, shareProject } from "../support/registry-fixtures";

let crew: TestUser;
let qa: TestUser;
let viewer: TestUser;
let sensorId: string;
const ids: string[] = [];
const N = 57;
// shot i: D = 2 + 2i m, error (i mod 7) − 3 mm except the last (40 mm), every third one
// located, every 4th dark
const D = (i: number) => 2 + 2 * i;
const LAST = N - 1;
const E = (i: number) => (i === LAST ? 40 : (i % 7) - 3);

beforeAll(async () => {
  [crew, qa, viewer] = await Promise.all([makeUser("crew"), makeUser("qa"), makeUser("viewer")]);
  sensorId = (await makeSensor({ label: "Roof scanner R1", toleranceMm: 2, tolerancePpm: 0 })).id;
  const site = await makeSite();
  // issue 14: the readers are members of the project the shots belong to
  await shareProject([{ id: sensorId }], [site], [crew, qa, viewer]);
  const sessionId = crypto.randomUUID();
  const list = Array.from({ length: N }, (_, i) => {
    const id = crypto.randomUUID();
    ids.push(id);
    return {
      id,
      sessionId,
      // several shots share a time, so paging must break ties by id
      takenAt: `2026-05-06T09:${String(Math.floor(i / 3)).padStart(2, "0")}:00+02:00`,
      reference: { method: "edm", distanceM: D(i) },
      readings: { rangesM: [D(i) + E(i) / 1000] },
      reflectancePct: i % 4 === 0 ? 10 : 85,
      illuminanceKlux: 30,
      ...(i % 3 === 0 ? { position: { lat: 47.1 + i * 1e-4, lon: 8.2 + i * 1e-4, accuracyM: 3 } } : {}),
      note: i === 5 ? "board leaning" : undefined,
    };
  });
  const a = await call(
    syncAction,
    apiRequest("/api/sync", { user: crew, json: { deviceId: "tablet-1", sessions: [{ id: sessionId, sensorId, siteId: site.id, startedAt: "2026-05-06T08:50:00+02:00" }], shots: list } }),
  );
  expect(a.json.results.filter((r: { status: string }) => r.status === "accepted")).toHaveLength(N + 1);
});

const get = (query: string, user = viewer) => call(shotsLoader, apiRequest(`/api/shots${query}`, { user }));

test("paging with the cursor walks every shot once, in time order, with no gaps or repeats", async () => {
  const seen: string[] = [];
  let cursor: string | null = null;
  let pages = 0;
  do {
    const a = await get(`?sensor=${sensorId}&limit=10${cursor ? `&cursor=${cursor}` : ""}`);
    expect(a.status).toBe(200);
    expect(a.json.shots.length).toBeLessThanOrEqual(10);
    seen.push(...a.json.shots.map((s: { id: string }) => s.id));
    cursor = a.json.nextCursor;
    pages++;
  } while (cursor && pages < 20);
  expect(pages).toBe(6); // 57 shots, 10 a page
  expect(seen).toHaveLength(N);
  expect(new Set(seen).size).toBe(N);
  expect([...seen].sort()).toEqual([...ids].sort());
  const all = (await get(`?sensor=${sensorId}&limit=1000`)).json.shots as { takenAt: string; id: string }[];
  const sorted = [...all].sort((a, b) => (a.takenAt < b.takenAt ? -1 : a.takenAt > b.takenAt ? 1 : a.id < b.id ? -1 : 1));
  expect(all.map((s) => s.id)).toEqual(sorted.map((s) => s.id));
  expect(seen).toEqual(all.map((s) => s.id));
});

test("filters: range band, reflectance class, within and a bad query", async () => {
  const band = (await get(`?sensor=${sensorId}&band=10-30&limit=1000`)).json.shots as { referenceM: number }[];
  const expectBand = Array.from({ length: N }, (_, i) => D(i)).filter((d) => d >= 10 && d < 30);
  expect(band.map((s) => s.referenceM).sort((a, b) => a - b)).toEqual(expectBand);
  const far = (await get(`?sensor=${sensorId}&band=100%2B&limit=1000`)).json.shots as { referenceM: number }[];
  expect(far.length).toBe(Array.from({ length: N }, (_, i) => D(i)).filter((d) => d >= 100).length);
  const dark = (await get(`?sensor=${sensorId}&band=dark&limit=1000`)).json.shots as { reflectancePct: number }[];
  expect(dark.length).toBe(Math.ceil(N / 4));
  expect(dark.every((s) => s.reflectancePct < 20)).toBe(true);
  // L = 2 · (2 mm + 0) = 4 mm: errors −3…3 mm within, the 40 mm one not
  const out = (await get(`?sensor=${sensorId}&within=false`)).json.shots;
  expect(out.map((s: { id: string }) => s.id)).toEqual([ids[LAST]]);
  expect((await get(`?sensor=${sensorId}&within=true&limit=1000`)).json.shots).toHaveLength(N - 1);
  const shot = (await get(`?sensor=${sensorId}&limit=1`)).json.shots[0];
  expect(shot.limitMm).toBeCloseTo(4, 12);
  expect(shot).toHaveProperty("position");
  const bad = await get(`?band=ten&limit=0&within=maybe`);
  expect(bad.status).toBe(400);
  expect(bad.json.errors.map((e: { path: string }) => e.path).sort()).toEqual(["band", "limit", "within"]);
  expect((await get(`?cursor=garbage`)).status).toBe(400);
  expect((await call(shotsLoader, apiRequest(`/api/shots`))).status).toBe(401);
});

test("the GeoJSON is a FeatureCollection of the located shots with errorMm, limitMm, within", async () => {
  const a = await call(geoLoader, apiRequest(`/api/shots.geojson?sensor=${sensorId}`, { user: viewer }));
  expect(a.status).toBe(200);
  expect(a.headers.get("Content-Type")).toMatch(/application\/geo\+json/);
  const fc = a.json;
  expect(fc.type).toBe("FeatureCollection");
  expect(fc.features).toHaveLength(Math.ceil(N / 3));
  for (const f of fc.features) {
    expect(f.type).toBe("Feature");
    expect(f.geometry.type).toBe("Point");
    expect(f.geometry.coordinates).toHaveLength(2);
    const [lon, lat] = f.geometry.coordinates;
    expect(lon).toBeGreaterThan(8);
    expect(lat).toBeGreaterThan(47); // [lon, lat] order (RFC 7946)
    expect(typeof f.properties.errorMm).toBe("number");
    expect(f.properties.limitMm).toBeCloseTo(4, 12);
    expect(typeof f.properties.within).toBe("boolean");
  }
  const i = ids.indexOf(fc.features[1].properties.id);
  expect(fc.features[1].properties.errorMm).toBeCloseTo(E(i), 9);
});

test("exclusion: POST needs a reason and QA; DELETE restores; both audited, never deleted, and the report follows", async () => {
  const id = ids[10]!;
  const ex = (method: "POST" | "DELETE", user: TestUser | undefined, json?: unknown) => call(exclusionAction, apiRequest(`/api/shots/${id}/exclusion`, { user, method, json }), { shotId: id });
  const reportN = async () => {
    const r = await call(reportLoader, apiRequest(`/api/sensors/${sensorId}/report`, { user: viewer }), { sensorId });
    return [r.json.n, r.json.excluded];
  };
  expect(await reportN()).toEqual([N, 0]);
  expect((await ex("POST", undefined, { reason: "wind" })).status).toBe(401);
  expect((await ex("POST", crew, { reason: "wind" })).status).toBe(403);
  expect((await ex("POST", viewer, { reason: "wind" })).status).toBe(403);
  const noReason = await ex("POST", qa, { reason: "  " });
  expect(noReason.status).toBe(400);
  expect(noReason.json.errors[0].path).toBe("reason");

  const a = await ex("POST", qa, { reason: "crew member walked through the beam" });
  expect(a.status).toBe(200);
  expect(a.json.shot).toMatchObject({ id, excluded: true });
  expect(a.json.exclusions).toHaveLength(1);
  expect(a.json.exclusions[0]).toMatchObject({ reason: "crew member walked through the beam", byUserId: qa.id, restoredAt: null });
  expect(await reportN()).toEqual([N - 1, 1]);
  expect((await ex("POST", qa, { reason: "again" })).status).toBe(409);

  expect((await ex("DELETE", qa, {})).status).toBe(400);
  const b = await ex("DELETE", qa, { reason: "checked the photo: the beam was clear" });
  expect(b.status).toBe(200);
  expect(b.json.shot.excluded).toBe(false);
  expect(b.json.exclusions[0]).toMatchObject({ restoredBy: qa.id, restoreReason: "checked the photo: the beam was clear" });
  expect(b.json.exclusions[0].restoredAt).not.toBeNull();
  expect(await reportN()).toEqual([N, 0]);
  expect((await ex("DELETE", qa, { reason: "twice" })).status).toBe(409);

  // the exclusion row is kept (closed), the column follows, both actions are in the audit trail
  const rows = await getDb().select().from(exclusions).where(eq(exclusions.shotId, id));
  expect(rows).toHaveLength(1);
  const [shot] = await getDb().select({ excluded: shotsTable.excluded }).from(shotsTable).where(eq(shotsTable.id, id));
  expect(shot!.excluded).toBe(false);
  const trail = await getDb()
    .select()
    .from(auditLog)
    .where(and(eq(auditLog.entity, "shot"), eq(auditLog.entityId, id)));
  expect(trail.map((t) => t.action).sort()).toEqual(["shot.exclude", "shot.restore"]);
  expect(trail.every((t) => t.actorUserId === qa.id)).toBe(true);

  const missing = await call(exclusionAction, apiRequest(`/api/shots/nope/exclusion`, { user: qa, json: { reason: "x y z" } }), { shotId: "nope" });
  expect(missing.status).toBe(404);
});

test("flag=excluded and flag=outlier filters; outlier needs a sensor", async () => {
  expect((await get(`?flag=outlier`)).status).toBe(400);
  const outliers = (await get(`?sensor=${sensorId}&flag=outlier`)).json.shots;
  // errors −3…3 mm (median 0, MAD 2 mm: cut 3·1.4826·2 = 8.9 mm) and one of 40 mm
  expect(outliers.map((s: { id: string }) => s.id)).toEqual([ids[LAST]]);
  expect(outliers[0].flags).toEqual(["outlier"]);
  expect((await get(`?sensor=${sensorId}&flag=excluded`)).json.shots).toEqual([]);
});

test("a shot row names its target and carries the open exclusion's reason for the review table", async () => {
  const id = ids[20]!;
  await call(exclusionAction, apiRequest(`/api/shots/${id}/exclusion`, { user: qa, json: { reason: "reflector fogged" } }), { shotId: id });
  const row = (await get(`?sensor=${sensorId}&flag=excluded`)).json.shots[0];
  expect(row).toMatchObject({ id, excluded: true, exclusionReason: "reflector fogged", targetLabel: null, photoIds: [] });
  await call(exclusionAction, apiRequest(`/api/shots/${id}/exclusion`, { user: qa, method: "DELETE", json: { reason: "fog lifted, reading fine" } }), { shotId: id });
  const back = (await get(`?sensor=${sensorId}&limit=1000`)).json.shots.find((s: { id: string }) => s.id === id);
  expect(back.exclusionReason).toBeNull();
});
