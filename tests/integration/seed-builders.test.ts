// The shared builders as test factories: their default bodies pass the real registry and sync,
// and the invented readings (reported ranges, round-trip times, correlation samples) come back
// from the server's own corrections at the range they were made for.
import { shareProject } from "../support/registry-fixtures";
import { eq } from "drizzle-orm";
import { beforeAll, expect, test } from "vitest";
import { getDb } from "~/db/client.server";
import { shots } from "~/db/schema";
import { createSensor } from "~/models/sensors.server";
import { createSite } from "~/models/sites.server";
import { ingestSync } from "~/models/sync.server";
import { createTape } from "~/models/tapes.server";
import { upsertUserFromCli } from "~/models/users.server";
import {
  buildSensorBody,
  buildSessionBody,
  buildShotBody,
  buildSiteBody,
  buildSyncBody,
  buildTapeBody,
  createRng,
  phaseSamplesFor,
  reportedRangesFor,
  roundTripNsFor,
  stableUuid,
} from "~/seed/builders";

let crew: { id: string; role: "crew" };

beforeAll(async () => {
  const u = await upsertUserFromCli({ email: "builders.crew@fernhollow.example", role: "crew", name: "Builder Crew" });
  crew = { id: u.id, role: "crew" };
});

function idOf(r: { status: number; body: unknown }) {
  expect([200, 201]).toContain(r.status);
  return (r.body as { id: string }).id;
}

test("default registry bodies are accepted as they are, and the same body again answers 200", async () => {
  const sensor = buildSensorBody();
  expect((await createSensor(null, sensor)).status).toBe(201);
  expect((await createSensor(null, sensor)).status).toBe(200);
  expect((await createTape(null, buildTapeBody())).status).toBe(201);
  const site = await createSite(null, buildSiteBody());
  expect(site.status).toBe(201);
  // each call makes a new label, so two default sensors are two sensors
  expect(buildSensorBody().label).not.toBe(buildSensorBody().label);
});

test("stableUuid is a version-4-shaped UUID that depends only on its name", () => {
  const a = stableUuid("shot:1");
  expect(a).toMatch(/^[0-9a-f]{8}-[0-9a-f]{4}-4[0-9a-f]{3}-[89ab][0-9a-f]{3}-[0-9a-f]{12}$/);
  expect(stableUuid("shot:1")).toBe(a);
  expect(stableUuid("shot:2")).not.toBe(a);
  const r1 = createRng(7);
  const r2 = createRng(7);
  expect([r1.next(), r1.normal(), r1.normal()]).toEqual([r2.next(), r2.normal(), r2.normal()]);
});

test("readings made for a chosen range come back from the server at that range", async () => {
  const air = { airTempC: 27.5, pressureHpa: 968.0, humidityPct: 35 };
  const pulsed = { ...buildSensorBody({ wavelengthNm: 1550, appliesAirCorrection: false, assumedRefractivity: 281.3 }) };
  const cw = buildSensorBody({ kind: "cw", wavelengthNm: 850, modulationHz: [20_000_000, 25_000_000], toleranceMm: 10, tolerancePpm: 1000, appliesAirCorrection: false });
  const pulsedId = idOf(await createSensor(null, pulsed));
  const cwId = idOf(await createSensor(null, cw));
  const siteId = idOf(await createSite(null, buildSiteBody()));
  await shareProject([{ id: pulsedId }, { id: cwId }], [{ id: siteId }], [crew]); // issue 14

  const s1 = buildSessionBody({ sensorId: pulsedId, siteId, ...air });
  const s2 = buildSessionBody({ sensorId: cwId, siteId, ...air });
  const wanted = { reported: 47.3125, timed: 12.004, phase: 17 };
  const spec = { wavelengthNm: 1550, appliesAirCorrection: false, assumedRefractivity: 281.3 };
  const reported = buildShotBody({ sessionId: s1.id, reference: { method: "edm", distanceM: 47.31 }, readings: { rangesM: reportedRangesFor(spec, air, [wanted.reported]) } });
  const timed = buildShotBody({ sessionId: s1.id, reference: { method: "edm", distanceM: 12 }, readings: { roundTripNs: roundTripNsFor(spec, air, [wanted.timed]) } });
  const phase = buildShotBody({
    sessionId: s2.id,
    reference: { method: "edm", distanceM: 17 },
    readings: {
      phase: [20_000_000, 25_000_000].map((f) => phaseSamplesFor({ sensor: { wavelengthNm: 850 }, air, frequencyHz: f, rangeM: wanted.phase, amplitude: 500, offset: 1000 })),
    },
  });
  // the reported range differs from the wanted one by the first velocity correction (tens of ppm here)
  const k = wanted.reported / (reported.readings as { rangesM: number[] }).rangesM[0]! - 1;
  expect(Math.abs(k) * 1e6).toBeGreaterThan(10);

  const out = await ingestSync(crew, buildSyncBody({ sessions: [s1, s2], shots: [reported, timed, phase] }));
  expect(out.status).toBe(200);
  const results = (out.body as { results: { status: string }[] }).results;
  expect(results.map((r) => r.status)).toEqual(["accepted", "accepted", "accepted", "accepted", "accepted"]);

  const range = async (id: string) => (await getDb().select({ rangeM: shots.rangeM }).from(shots).where(eq(shots.id, id)))[0]!.rangeM;
  expect(Math.abs((await range(reported.id)) - wanted.reported)).toBeLessThan(1e-9);
  expect(Math.abs((await range(timed.id)) - wanted.timed)).toBeLessThan(1e-9);
  expect(Math.abs((await range(phase.id)) - wanted.phase)).toBeLessThan(1e-9);
});
