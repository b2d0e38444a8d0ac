// Sync-body records the scope tests build (issue 13: written once): a session of a sensor at a
// site on 4 May 2026 with its air readings, as the tablet sends it (api.md "POST /api/sync").
export const syncSession = (sensorId: string, siteId: string, over: Record<string, unknown> = {}) => ({
  id: crypto.randomUUID(),
  sensorId,
  siteId,
  startedAt: "2026-05-04T08:00:00+02:00",
  airTempC: 18,
  pressureHpa: 1004,
  humidityPct: 60,
  ...over,
});
