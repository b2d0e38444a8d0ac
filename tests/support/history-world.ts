// The test world of the sensor history (issue 15), built the same way for its integration test
// and its browser test (issue 13: one builder): a sensor whose certificate fell due on 2026-07-01,
// seven monthly sessions whose bias climbs steadily (a run of seven moving up: Nelson's test 3),
// each with three EDM shots at bias − 0.4, bias, bias + 0.4 mm, synced through the real
// POST /api/sync as a crew member. Invented values in the manner of the demo scenario (brief.md).
import { action as syncAction } from "~/routes/api.sync";
import type { sensors } from "~/db/schema";
import { apiRequest, call, makeSensor, makeSite, makeUser, type TestUser } from "./registry-fixtures";

/** Each session's bias (mm), in session order. */
export const HISTORY_BIASES = [0.2, 0.5, 0.9, 1.2, 1.6, 2.1, 2.3];
/** The sessions' dates: the last two after the certificate's due date. */
export const HISTORY_DATES = ["2026-03-02", "2026-04-01", "2026-05-04", "2026-06-01", "2026-07-01", "2026-08-03", "2026-09-01"];

export async function historyWorld(opts: {
  /** the sensor's label and certificate (number, laboratory) */
  sensor: Partial<typeof sensors.$inferInsert>;
  siteName: string;
  deviceId: string;
  /** puts the syncing crew (and whoever reads the history) in a project holding the sensor and site */
  share(crew: TestUser, sensor: { id: string }, site: { id: string }): Promise<unknown>;
}) {
  const crew = await makeUser("crew");
  const sensor = await makeSensor({ toleranceMm: 5, tolerancePpm: 10, certIssued: "2025-07-01", certDue: "2026-07-01", ...opts.sensor });
  const site = await makeSite({ name: opts.siteName });
  await opts.share(crew, sensor, site);
  const sessions = HISTORY_DATES.map((d) => ({ id: crypto.randomUUID(), sensorId: sensor.id, siteId: site.id, startedAt: `${d}T08:00:00+02:00`, airTempC: 15, pressureHpa: 1010, humidityPct: 60 }));
  const shots = sessions.flatMap((s, i) =>
    [-0.4, 0, 0.4].map((d, k) => ({
      id: crypto.randomUUID(),
      sessionId: s.id,
      takenAt: `${HISTORY_DATES[i]}T09:0${k}:00+02:00`,
      reference: { method: "edm", distanceM: 40 + 10 * k },
      readings: { rangesM: [40 + 10 * k + (HISTORY_BIASES[i]! + d) / 1000] },
      reflectancePct: 50,
      illuminanceKlux: 20,
    })),
  );
  const sync = await call(syncAction, apiRequest("/api/sync", { user: crew, json: { deviceId: opts.deviceId, sessions, shots } }));
  return { crew, sensor, site, sync };
}
