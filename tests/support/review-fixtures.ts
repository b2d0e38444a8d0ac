// A small invented review world (brief.md's Fernhollow Geomatics): a roof scanner that fails
// its bias test because dark targets in bright sun read long, a tripod scanner that passes,
// a yard baseline with geographic positions, one project. Registry rows go in through drizzle
// (registry-fixtures), field records through the real ingest (ingestSync) as a crew member.
import { ingestSync } from "~/models/sync.server";
import { getDb } from "~/db/client.server";
import { projectSensors } from "~/db/schema";
import { makeProject, makeSensor, makeSite, makeUser, type TestUser } from "./registry-fixtures";

const uid = () => crypto.randomUUID();

/** Station of the invented yard baseline (mid-ocean on purpose: no real place). */
export const YARD = { lat: 10.0, lon: -30.0 };
const DISTANCES = [5, 12, 20, 35, 50, 70];
/** Metres to degrees of latitude near the equator-ish test latitude (≈ 110 574 m per degree). */
const M_PER_DEG_LAT = 110_574;

export type FixtureShot = { id: string; sessionId: string; distanceM: number; errorMm: number; reflectancePct: number; illuminanceKlux: number; targetId: string; takenAt: string };

/** Small deterministic spread in mm, −1.5 … +1.5. */
const noise = (i: number) => (((i * 7919) % 13) - 6) / 4;

export async function reviewWorld() {
  const [qa, crew, crew2, admin, viewer] = await Promise.all([makeUser("qa"), makeUser("crew"), makeUser("crew"), makeUser("admin"), makeUser("viewer")]);
  const failing = await makeSensor({ label: "Roof scanner RS-1", kind: "pulsed", wavelengthNm: 905, toleranceMm: 5, tolerancePpm: 10, calibrationDue: "2026-09-30" });
  const passing = await makeSensor({ label: "Tripod scanner TS-2", kind: "pulsed", wavelengthNm: 1550, toleranceMm: 3, tolerancePpm: 5, calibrationDue: "2026-01-31" });
  const site = await makeSite({
    name: "Fernhollow yard baseline",
    stations: [{ label: "S1", geo: { lat: YARD.lat, lon: YARD.lon, h: 50 } }],
    targets: [
      { label: "Dark board", reflectancePct: 10, geo: { lat: YARD.lat + 40 / M_PER_DEG_LAT, lon: YARD.lon, h: 50 } },
      { label: "Grey board", reflectancePct: 50, geo: { lat: YARD.lat + 40 / M_PER_DEG_LAT, lon: YARD.lon + 0.0002, h: 50 } },
      { label: "White board", reflectancePct: 85, geo: { lat: YARD.lat + 40 / M_PER_DEG_LAT, lon: YARD.lon - 0.0002, h: 50 } },
    ],
  });
  const [dark, grey, white] = site.targets as [(typeof site.targets)[0], (typeof site.targets)[0], (typeof site.targets)[0]];
  const project = await makeProject({
    name: "River valley corridor",
    sensorIds: [failing.id, passing.id],
    siteIds: [site.id],
    // issue 14: everyone but the admin is a member (admins see every project)
    memberIds: [qa.id, crew.id, crew2.id, viewer.id],
  });

  const sessions: { id: string; sensorId: string; startedAt: string; by: TestUser }[] = [];
  const shots: FixtureShot[] = [];
  const addSession = (sensorId: string, startedAt: string, by: TestUser) => {
    const s = { id: uid(), sensorId, startedAt, by };
    sessions.push(s);
    return s;
  };
  const addShot = (sessionId: string, i: number, t: { id: string; reflectancePct: number }, klux: number, errorMm: number, day: string) => {
    const distanceM = DISTANCES[i % DISTANCES.length]!;
    const takenAt = `${day}T${String(8 + Math.floor(i / 6)).padStart(2, "0")}:${String((i * 7) % 60).padStart(2, "0")}:00+02:00`;
    shots.push({ id: uid(), sessionId, distanceM, errorMm, reflectancePct: t.reflectancePct, illuminanceKlux: klux, targetId: t.id, takenAt });
  };

  // Roof scanner: a shaded morning where everything is near zero, then a sunny afternoon where
  // the dark board reads 18 mm long (9 of its 15 shots are on the dark board).
  const shade = addSession(failing.id, "2026-05-04T08:00:00+02:00", crew);
  for (let i = 0; i < 15; i++) addShot(shade.id, i, [dark, grey, white][i % 3]!, 4, 0.5 + noise(i) / 3, "2026-05-04");
  const sun = addSession(failing.id, "2026-05-05T13:00:00+02:00", crew2);
  for (let i = 0; i < 15; i++) {
    const t = i < 9 ? dark : i < 12 ? grey : white;
    addShot(sun.id, i, t, 85, t === dark ? 18 + noise(i) / 2 : 0.5 + noise(i) / 3, "2026-05-05");
  }
  // Tripod scanner: 24 shots within ±1.5 mm, shade and sun.
  const t1 = addSession(passing.id, "2026-05-04T10:00:00+02:00", crew);
  for (let i = 0; i < 12; i++) addShot(t1.id, i, [dark, grey, white][i % 3]!, 6, noise(i + 3), "2026-05-04");
  const t2 = addSession(passing.id, "2026-05-05T14:00:00+02:00", crew);
  for (let i = 0; i < 12; i++) addShot(t2.id, i, [dark, grey, white][i % 3]!, 80, noise(i + 5), "2026-05-05");

  for (const by of [crew, crew2]) {
    const mine = sessions.filter((s) => s.by === by);
    const ids = new Set(mine.map((s) => s.id));
    const body = {
      deviceId: `tablet-${by.id.slice(0, 4)}`,
      sessions: mine.map((s) => ({ id: s.id, sensorId: s.sensorId, siteId: site.id, startedAt: s.startedAt, airTempC: 18.5, pressureHpa: 1004.2, humidityPct: 62 })),
      shots: shots
        .filter((s) => ids.has(s.sessionId))
        .map((s, k) => ({
          id: s.id,
          sessionId: s.sessionId,
          takenAt: s.takenAt,
          targetId: s.targetId,
          reference: { method: "edm", distanceM: s.distanceM },
          readings: { rangesM: [s.distanceM + s.errorMm / 1000] },
          reflectancePct: s.reflectancePct,
          illuminanceKlux: s.illuminanceKlux,
          // along the line of sight, a little off it so the map shows a corridor
          position: { lat: YARD.lat + s.distanceM / M_PER_DEG_LAT, lon: YARD.lon + ((k % 5) - 2) * 0.00003, accuracyM: 3 },
        })),
    };
    const answer = await ingestSync(by, body);
    const results = (answer.body as { results?: { status: string; errors?: unknown }[] }).results ?? [];
    const bad = results.filter((r) => r.status !== "accepted");
    if (answer.status !== 200 || bad.length) throw new Error(`fixture sync failed: ${answer.status} ${JSON.stringify(bad.slice(0, 3) ?? answer.body)}`);
  }

  return {
    users: { qa, crew, crew2, admin, viewer },
    failing,
    passing,
    site,
    project,
    sessions,
    shots,
    shotsOf: (sensorId: string) => {
      const ids = new Set(sessions.filter((s) => s.sensorId === sensorId).map((s) => s.id));
      return shots.filter((s) => ids.has(s.sessionId));
    },
    darkTargetId: dark.id,
  };
}

export type ReviewWorld = Awaited<ReturnType<typeof reviewWorld>>;

/**
 * Issue 12's case: a continuous-wave depth camera (20 and 25 MHz, combined interval ≈ 29.97 m)
 * with 20 good shots and one on a board at 32 m that wrapped to ~2.05 m (error −29 953 mm).
 * The sensor corrects for air itself, so each error is exactly the reading minus the reference.
 */
export async function addWrapSensor(w: ReviewWorld) {
  const { makeSensor } = await import("./registry-fixtures");
  const sensor = await makeSensor({ label: "Depth camera DC-3", kind: "cw", wavelengthNm: 850, modulationHz: [20e6, 25e6], appliesAirCorrection: true, toleranceMm: 10, tolerancePpm: 0 });
  // issue 14: the world's project uses it too, so its sessions imply the project
  await getDb().insert(projectSensors).values({ projectId: w.project.id, sensorId: sensor.id });
  // four sessions months apart (two on one January day), so the bias-per-session chart spans a season
  const starts = ["2026-01-12T09:00:00+01:00", "2026-01-12T14:30:00+01:00", "2026-03-03T10:00:00+01:00", "2026-05-06T09:55:00+02:00"];
  const sessions = starts.map((startedAt) => ({ id: uid(), sensorId: sensor.id, siteId: w.site.id, startedAt, airTempC: 18, pressureHpa: 1004, humidityPct: 60 }));
  const errs = [...Array.from({ length: 20 }, (_, i) => 0.8 + noise(i) * 2), -29953];
  const targets = [w.site.targets[1]!, w.site.targets[2]!];
  const shots = errs.map((e, i) => {
    const distanceM = i === 20 ? 32 : DISTANCES[i % 4]!;
    const k = Math.min(3, Math.floor(i / 5));
    const start = starts[k]!;
    return {
      id: uid(),
      sessionId: sessions[k]!.id,
      takenAt: `${start.slice(0, 11)}${String(Number(start.slice(11, 13)) + 1).padStart(2, "0")}:${String((i * 5) % 60).padStart(2, "0")}:00${start.slice(-6)}`,
      targetId: targets[i % 2]!.id,
      reference: { method: "edm", distanceM },
      readings: { rangesM: [Math.round((distanceM + e / 1000) * 1e6) / 1e6] },
      reflectancePct: targets[i % 2]!.reflectancePct,
      illuminanceKlux: i % 3 === 0 ? 4 : 20,
    };
  });
  const answer = await ingestSync(w.users.crew, { deviceId: "tablet-depth", sessions, shots });
  const bad = ((answer.body as { results?: { status: string }[] }).results ?? []).filter((r) => r.status !== "accepted");
  if (answer.status !== 200 || bad.length) throw new Error(`depth camera sync failed: ${answer.status} ${JSON.stringify(bad.slice(0, 3))}`);
  return { sensor, wrapShotId: shots[20]!.id };
}
