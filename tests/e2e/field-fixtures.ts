// Registry rows the field browser tests need, in the e2e server's database: a pulsed sensor,
// a site with targets and a station, a second site (for a stale target), a steel tape.
// Invented values in the manner of the demo scenario (brief.md), through the shared builders.
import { useServerEnv } from "./helpers";

export type FieldWorld = Awaited<ReturnType<typeof fieldWorld>>;

export async function fieldWorld(tag: string) {
  useServerEnv();
  const { makeSensor, makeSite, makeTape } = await import("../support/registry-fixtures");
  const sensor = await makeSensor({ label: `Roof scanner ${tag}`, kind: "pulsed", wavelengthNm: 905, toleranceMm: 5, tolerancePpm: 10, appliesAirCorrection: true });
  const site = await makeSite({
    name: `Fernhollow yard ${tag}`,
    stations: [{ label: "S1", grid: { e: 1000, n: 2000, h: 50 } }],
    targets: [
      { label: "Dark board", reflectancePct: 10, referenceM: 12.5, grid: { e: 1000, n: 2012.5, h: 50 } },
      { label: "Grey board", reflectancePct: 50, referenceM: 25, grid: { e: 1000, n: 2025, h: 50 } },
      { label: "White board", reflectancePct: 85, referenceM: 40, grid: { e: 1000, n: 2040, h: 50 } },
    ],
  });
  const other = await makeSite({ name: `Roadside range ${tag}`, targets: [{ label: "Far board", reflectancePct: 85, referenceM: 60 }] });
  const tape = await makeTape({ label: `Steel tape 50 m ${tag}` });
  const project = await e2eProject(tag, [sensor.id], [site.id, other.id], { tapeIds: [tape.id] });
  return { sensor, site, other, tape, project };
}

/**
 * issue 14: a project listing these sensors, sites (and tapes, EDMs) whose members are the e2e crew, QA and
 * viewer (the admin sees every project), so their tablets and screens see its records.
 */
export async function e2eProject(tag: string, sensorIds: string[], siteIds: string[], links: { tapeIds?: string[]; edmIds?: string[] } = {}) {
  useServerEnv();
  const { makeProject } = await import("../support/registry-fixtures");
  const { getDb } = await import("~/db/client.server");
  const { users } = await import("~/db/schema");
  const { inArray } = await import("drizzle-orm");
  const members = await getDb()
    .select({ id: users.id })
    .from(users)
    .where(inArray(users.email, ["crew@e2e.test", "qa@e2e.test", "viewer@e2e.test"]));
  return makeProject({ name: `E2E project ${tag}`, sensorIds, siteIds, ...links, memberIds: members.map((m) => m.id) });
}

/** Sessions in the e2e database's checkSessions table by id (what the server keeps). */
export async function serverShotCount(sessionId: string) {
  useServerEnv();
  const { getDb } = await import("~/db/client.server");
  const { shots } = await import("~/db/schema");
  const { eq, count } = await import("drizzle-orm");
  const [row] = await getDb().select({ n: count() }).from(shots).where(eq(shots.sessionId, sessionId));
  return row?.n ?? 0;
}
