// One check-shot on the server for the photo tests (issue 13: the set-up their three files
// repeated): a sensor and a site in a project with the crew (and any readers, issue 14), one
// session and one EDM shot synced through the real POST /api/sync. Invented values (brief.md).
import { action as syncAction } from "~/routes/api.sync";
import { apiRequest, call, makeSensor, makeSite, shareProject, type TestUser } from "./registry-fixtures";

export async function syncedShot(crew: TestUser, readers: TestUser[] = []) {
  const [sensor, site] = await Promise.all([makeSensor(), makeSite()]);
  await shareProject([sensor], [site], [crew, ...readers]);
  const sessionId = crypto.randomUUID();
  const shotId = crypto.randomUUID();
  const sync = await call(
    syncAction,
    apiRequest("/api/sync", {
      user: crew,
      json: {
        deviceId: "t",
        sessions: [{ id: sessionId, sensorId: sensor.id, siteId: site.id, startedAt: "2026-05-08T08:00:00+02:00" }],
        shots: [{ id: shotId, sessionId, takenAt: "2026-05-08T08:05:00+02:00", reference: { method: "edm", distanceM: 10 }, readings: { rangesM: [10.001] }, reflectancePct: 50, illuminanceKlux: 20 }],
      },
    }),
  );
  return { sensor, site, sessionId, shotId, sync };
}
