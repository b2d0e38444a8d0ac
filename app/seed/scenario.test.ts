// The invented demo through the shared ranging core alone (no database): every shot computes,
// and the three outcomes the demo exists to show come out of the real report maths.
import { expect, test } from "vitest";
import { computeShot, DEFAULT_RULE, sensorReport, type ReferenceInput, type ReportShot } from "~/domain";
import type { ShotBody } from "./builders";
import { buildDemoScenario, DEMO_TAPE, sensorSpec, type DemoScenario, type SensorKey } from "./scenario";

function referenceInput(s: DemoScenario, shot: ShotBody, siteKey: "yard" | "roadside"): ReferenceInput {
  const r = shot.reference;
  if (r.method === "edm") return { method: "edm", distanceM: r.distanceM! };
  if (r.method === "tape") return { method: "tape", distanceM: r.distanceM!, tape: DEMO_TAPE, ...(r.tape as Required<NonNullable<typeof r.tape>>) };
  const site = s.sites[siteKey];
  const st = site.stations.find((x) => x.id === r.stationId)!;
  const tg = site.targets.find((x) => x.id === shot.targetId)!;
  return {
    method: "coordinates",
    station: { grid: st.grid, geo: st.geo },
    target: { grid: tg.grid, geo: tg.geo },
    instrumentHeightM: r.instrumentHeightM!,
    targetHeightM: r.targetHeightM!,
  };
}

function reportOf(s: DemoScenario, key: SensorKey) {
  const sensor = sensorSpec(key);
  const rows: ReportShot[] = [];
  for (const shot of s.shots) {
    const session = s.sessions.find((x) => x.id === shot.sessionId)!;
    if (session.sensorKey !== key) continue;
    const c = computeShot({ sensor, air: session, reference: referenceInput(s, shot, session.siteKey), readings: shot.readings, rule: DEFAULT_RULE });
    const target = s.sites[session.siteKey].targets.find((t) => t.id === shot.targetId)!;
    rows.push({
      id: shot.id,
      takenAt: shot.takenAt,
      sessionId: session.id,
      sessionStartedAt: session.startedAt,
      referenceM: c.referenceM,
      rangeM: c.rangeM,
      errorMm: c.errorMm,
      repeatabilityMm: c.repeatabilityMm,
      reflectancePct: shot.reflectancePct,
      retro: !!target.retro,
      illuminanceKlux: shot.illuminanceKlux,
      excluded: false,
      wrap: c.wrap,
      airDefaulted: c.airDefaulted.length > 0,
    });
  }
  return { rows, report: sensorReport({ sensor, rule: DEFAULT_RULE, shots: rows }) };
}

test("the scenario is the same on every build and has the promised size", () => {
  const a = buildDemoScenario();
  const b = buildDemoScenario();
  expect(JSON.stringify(a)).toBe(JSON.stringify(b));
  expect(a.users.map((u) => u.role).sort()).toEqual(["admin", "crew", "qa", "viewer", "viewer"]);
  // issue 14: two client projects sharing the tripod scanner and the yard, a viewer each, crew and QA in both
  expect(a.projects.map((p) => p.id)).toEqual(["river-valley-corridor", "kestrel-quarry-stockpiles"]);
  const [river, quarry] = a.projects;
  expect(river!.sensorIds.filter((x) => quarry!.sensorIds.includes(x))).toEqual(["fernhollow-ts9"]);
  for (const p of a.projects) {
    const roles = p.memberEmails.map((e) => a.users.find((u) => u.email === e)!.role).sort();
    expect(roles).toEqual(["crew", "qa", "viewer"]);
  }
  expect(Object.keys(a.sensors)).toHaveLength(3);
  expect(a.sessions.length).toBeGreaterThanOrEqual(6);
  expect(a.shots.length).toBeGreaterThanOrEqual(300);
  expect(new Set(a.shots.map((x) => x.id)).size).toBe(a.shots.length);
  const methods = new Set(a.shots.map((x) => x.reference.method));
  expect([...methods].sort()).toEqual(["coordinates", "edm", "tape"]);
  expect(a.shots.some((x) => "roundTripNs" in x.readings)).toBe(true);
  expect(a.shots.some((x) => "rangesM" in x.readings && x.readings.rangesM.length > 1)).toBe(true);
  expect(a.shots.some((x) => "phase" in x.readings)).toBe(true);
  expect(a.sessions.filter((x) => x.humidityPct === undefined)).toHaveLength(1);
  const lux = a.shots.map((x) => x.illuminanceKlux as number);
  expect(Math.min(...lux)).toBeLessThan(5);
  expect(Math.max(...lux)).toBeGreaterThan(90);
});

test("grid and geographic positions of each target give one reference distance (to 0.1 mm)", async () => {
  const { geoChord, gridDistance3d } = await import("~/domain");
  const s = buildDemoScenario();
  for (const site of Object.values(s.sites)) {
    const st = site.stations[0];
    for (const t of site.targets) {
      expect(Math.abs(geoChord(st.geo, t.geo) - gridDistance3d(st.grid, t.grid))).toBeLessThan(1e-4);
    }
  }
});

test("roof scanner passes, tripod fails on dark targets in bright sun, camera wraps once and lacks shots", () => {
  const s = buildDemoScenario();
  const roof = reportOf(s, "roof").report;
  expect(roof.verdict).toBe("pass");
  expect(roof.shots.some((x) => x.flags.includes("outlier"))).toBe(true);

  const { rows, report: tripod } = reportOf(s, "tripod");
  expect(tripod.verdict).toBe("fail");
  expect(tripod.failed).toContain("within");
  const darkSun = rows.filter((r) => s.meta[r.id].darkSun);
  const rest = rows.filter((r) => !s.meta[r.id].darkSun);
  const mean = (xs: ReportShot[]) => xs.reduce((a, r) => a + r.errorMm, 0) / xs.length;
  expect(darkSun.length).toBeGreaterThanOrEqual(15);
  expect(mean(darkSun) - mean(rest)).toBeGreaterThan(5);
  const dark = tripod.byReflectance.find((b) => b.band === "dark")!;
  const bright = tripod.byReflectance.find((b) => b.band === "bright")!;
  expect(dark.biasMm! - bright.biasMm!).toBeGreaterThan(2);
  const high = tripod.byIlluminance.find((b) => b.band === "high")!;
  const low = tripod.byIlluminance.find((b) => b.band === "low")!;
  expect(high.withinPct!).toBeLessThan(low.withinPct!);

  const camera = reportOf(s, "camera").report;
  expect(camera.verdict).toBe("insufficient");
  const wraps = camera.shots.filter((x) => x.flags.includes("wrap"));
  expect(wraps).toHaveLength(1);
  expect(s.meta[wraps[0].id].beyondInterval).toBe(true);
  // the rest of the camera's shots sit within its limit
  expect(camera.shots.filter((x) => !x.flags.includes("wrap")).every((x) => x.within)).toBe(true);
});
