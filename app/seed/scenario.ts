// The invented demo of brief.md: "Fernhollow Geomatics" checks three sensors at its yard
// baseline and a roadside test range before a corridor survey of an imaginary river valley
// road. Every person, place, serial and reading here is made up; the positions are a
// featureless spot, never named. A seeded PRNG makes the same data on every run.
//
// The invented truth, so the demo shows what a QA lead must find:
// - roof scanner: small bias and scale well inside ±(8 mm + 20 ppm) → pass (one multipath outlier);
// - tripod scanner: fine in shade, but reads ~7.5 mm long on 10 % targets above 50 klux
//   ("dark targets in bright sun") → too few shots within ±2·(3 mm + 10 ppm) → fail;
// - depth camera: 19 shots (not enough for a verdict), one of them on the retro target at
//   ~32 m, beyond the 20/25 MHz combined interval of ~30 m, so its phase wraps.
import { airState, geodeticToGeocentric, referenceDistance, tapeCorrections, unambiguousIntervalM, type AirInput, type Position, type SensorSpec } from "~/domain";
import {
  createRng,
  phaseSamplesFor,
  reportedRangesFor,
  round,
  roundTripNsFor,
  stableUuid,
  type GeoBody,
  type GridBody,
  type ProjectBody,
  type ReadingsBody,
  type ReferenceBody,
  type Rng,
  type SensorBody,
  type SessionBody,
  type ShotBody,
  type SiteBody,
  type StationBody,
  type TapeBody,
  type EdmBody,
  type TargetBody,
} from "./builders";

export const DEMO_SEED = 20260504;
export const DEMO_DEVICE_ID = "fernhollow-tablet-2";

export type DemoRole = "admin" | "qa" | "crew" | "viewer";
export type DemoUser = { email: string; name: string; role: DemoRole };

export const DEMO_USERS: DemoUser[] = [
  { email: "tamsin@fernhollow.example", name: "Tamsin Arkwright", role: "admin" },
  { email: "oren@fernhollow.example", name: "Oren Lindqvist", role: "qa" },
  { email: "priya@fernhollow.example", name: "Priya Castellano", role: "crew" },
  { email: "client.viewer@fernhollow.example", name: "Wendel Okafor", role: "viewer" },
  // issue 14: the second client's viewer (invented); sees only the quarry project
  { email: "maren.holt@kestrel-aggregates.example", name: "Maren Holt", role: "viewer" },
];

/** Client-made records (sessions, shots) carry UUIDs; the registry keeps readable ids. */
const id = (name: string) => stableUuid(`fernhollow-demo:${name}`);

export const DEMO_IDS = {
  tape: "fernhollow-ft50",
  roof: "fernhollow-rs2",
  tripod: "fernhollow-ts9",
  camera: "fernhollow-dc4",
  yard: "fernhollow-yard",
  roadside: "fernhollow-roadside",
  project: "river-valley-corridor",
  quarry: "kestrel-quarry-stockpiles", // issue 14: the second client's project
  edm: "fernhollow-ts15", // issue 15
} as const;

export type SensorKey = "roof" | "tripod" | "camera";

export const DEMO_TAPE: TapeBody = {
  id: DEMO_IDS.tape,
  label: "Steel tape 50 m (FT-50)",
  standardTempC: 20,
  standardTensionN: 50,
  areaMm2: 2.0,
  modulusGPa: 200,
  weightNPerM: 0.16,
  calibrationPpm: 12,
  // issue 15: the certificate's standard uncertainty and the certificate itself (invented)
  uncertaintyMm: 0.4,
  uncertaintyPpm: 15,
  certificate: { number: "EML-T-2025-0871", laboratory: "Eastbank Metrology Lab (invented)", issued: "2025-11-03", due: "2026-11-03" },
};

/** issue 15: the reference EDM that measured the EDM distances (invented). */
export const DEMO_EDM: EdmBody & { id: string } = {
  id: DEMO_IDS.edm,
  label: "Total station TS-15 (reference)",
  serial: "FHG-TS15-05520",
  uncertaintyMm: 1,
  uncertaintyPpm: 1.5,
  certificate: { number: "EML-E-2026-0112", laboratory: "Eastbank Metrology Lab (invented)", issued: "2026-01-20", due: "2027-01-20" },
};

export const DEMO_SENSORS: Record<SensorKey, SensorBody> = {
  roof: {
    id: DEMO_IDS.roof,
    label: "Roof scanner RS-2",
    serial: "FHG-RS2-00417",
    kind: "pulsed",
    wavelengthNm: 905,
    appliesAirCorrection: true,
    toleranceMm: 8,
    tolerancePpm: 20,
    outdoor: true,
    calibrationDue: "2027-03-31",
    laserClass: "1",
    certificate: { number: "EML-S-2026-0301", laboratory: "Eastbank Metrology Lab (invented)", issued: "2026-03-31", due: "2027-03-31" },
  },
  tripod: {
    id: DEMO_IDS.tripod,
    label: "Tripod scanner TS-9",
    serial: "FHG-TS9-10288",
    kind: "pulsed",
    wavelengthNm: 1550,
    appliesAirCorrection: false,
    assumedRefractivity: 281.3,
    toleranceMm: 3,
    tolerancePpm: 10,
    outdoor: true,
    calibrationDue: "2026-05-05",
    laserClass: "1M",
    // past due on its 6 May session: the demo shows the traceability flag
    certificate: { number: "EML-S-2025-0412", laboratory: "Eastbank Metrology Lab (invented)", issued: "2025-05-05", due: "2026-05-05" },
  },
  camera: {
    id: DEMO_IDS.camera,
    label: "Depth camera DC-4",
    serial: "FHG-DC4-03351",
    kind: "cw",
    wavelengthNm: 850,
    modulationHz: [20_000_000, 25_000_000],
    appliesAirCorrection: false,
    toleranceMm: 10,
    tolerancePpm: 1000,
    outdoor: false,
    calibrationDue: "2027-09-30",
    laserClass: "1",
  },
};

export function sensorSpec(key: SensorKey): SensorSpec {
  const s = DEMO_SENSORS[key];
  return {
    id: s.id!,
    kind: s.kind,
    wavelengthNm: s.wavelengthNm,
    modulationHz: s.modulationHz ?? [],
    appliesAirCorrection: s.appliesAirCorrection,
    assumedRefractivity: s.assumedRefractivity ?? 0,
    toleranceMm: s.toleranceMm,
    tolerancePpm: s.tolerancePpm,
    outdoor: s.outdoor ?? true,
  };
}

// ---------- sites: invented positions of a featureless spot ----------
type SiteKey = "yard" | "roadside";
type Refl = "D" | "G" | "W" | "R";
const REFLECTANCE: Record<Refl, number> = { D: 10, G: 45, W: 88, R: 90 };
/** Board centres stand this high above the ground. */
const BOARD_HEIGHT_M = 1.25;
/** Instrument height the surveyed reference distances of the targets assume. */
const STANDARD_INSTRUMENT_HEIGHT_M = 1.5;

type SiteLayout = {
  key: SiteKey;
  name: string;
  origin: GeoBody;
  gridOrigin: GridBody;
  bearingDeg: number;
  slope: number;
  marks: number[];
  retroAtM: number;
  stations: { label: string; along: number; across: number }[];
};

const LAYOUTS: Record<SiteKey, SiteLayout> = {
  yard: {
    key: "yard",
    name: "Fernhollow yard baseline",
    origin: { lat: 48.61837, lon: 11.47269, h: 412.3 },
    gridOrigin: { e: 1000, n: 5000, h: 412.3 },
    bearingDeg: 63,
    slope: 0.008,
    marks: [2, 5, 10, 20, 30, 50],
    retroAtM: 35,
    stations: [
      { label: "YB-S1", along: 0, across: 0 },
      { label: "YB-S2", along: -2.5, across: 1.5 },
    ],
  },
  roadside: {
    key: "roadside",
    name: "Valley road test range",
    origin: { lat: 48.64412, lon: 11.53958, h: 398.7 },
    gridOrigin: { e: 2000, n: 8000, h: 398.7 },
    bearingDeg: 141,
    slope: -0.005,
    marks: [8, 15, 40, 80, 120, 160],
    retroAtM: 32,
    stations: [
      { label: "RT-S1", along: 0, across: 0 },
      { label: "RT-S2", along: -4, across: 0.8 },
    ],
  },
};

const WGS84_A = 6378137;
const WGS84_F = 1 / 298.257223563;

/** Geographic position of a local east/north/up offset: small-offset approximation, good to cm. */
function geoOfEnu(o: GeoBody, e: number, n: number, u: number): GeoBody {
  const e2 = WGS84_F * (2 - WGS84_F);
  const phi = (o.lat * Math.PI) / 180;
  const w = Math.sqrt(1 - e2 * Math.sin(phi) ** 2);
  const M = (WGS84_A * (1 - e2)) / w ** 3;
  const N = WGS84_A / w;
  return {
    lat: round(o.lat + ((n / M) * 180) / Math.PI, 9),
    lon: round(o.lon + ((e / (N * Math.cos(phi))) * 180) / Math.PI, 9),
    h: round(o.h + u + (e * e + n * n) / (2 * N), 4),
  };
}

/**
 * Exact local grid of a geographic point: the east/north/up rotation of its geocentric offset
 * from the site origin, so a 3-D grid distance equals the geocentric chord between the same
 * points (a rotation keeps lengths) and both coordinate sets give one reference distance.
 */
function gridOfGeo(o: GeoBody, g0: GridBody, p: GeoBody): GridBody {
  const a = geodeticToGeocentric(o);
  const b = geodeticToGeocentric(p);
  const dx = b.x - a.x;
  const dy = b.y - a.y;
  const dz = b.z - a.z;
  const phi = (o.lat * Math.PI) / 180;
  const lam = (o.lon * Math.PI) / 180;
  const e = -Math.sin(lam) * dx + Math.cos(lam) * dy;
  const n = -Math.sin(phi) * Math.cos(lam) * dx - Math.sin(phi) * Math.sin(lam) * dy + Math.cos(phi) * dz;
  const u = Math.cos(phi) * Math.cos(lam) * dx + Math.cos(phi) * Math.sin(lam) * dy + Math.sin(phi) * dz;
  return { e: round(g0.e + e, 4), n: round(g0.n + n, 4), h: round(g0.h + u, 4) };
}

export type DemoTarget = TargetBody & { id: string; key: string; markM: number; refl: Refl; grid: GridBody; geo: GeoBody; referenceM: number };
export type DemoStation = StationBody & { id: string; grid: GridBody; geo: GeoBody };
export type DemoSite = { key: SiteKey; body: SiteBody & { id: string }; targets: DemoTarget[]; stations: DemoStation[] };

function placePoint(L: SiteLayout, along: number, across: number, up: number) {
  const b = (L.bearingDeg * Math.PI) / 180;
  const e = along * Math.sin(b) + across * Math.cos(b);
  const n = along * Math.cos(b) - across * Math.sin(b);
  const geo = geoOfEnu(L.origin, e, n, L.slope * along + up);
  return { geo, grid: gridOfGeo(L.origin, L.gridOrigin, geo) };
}

function buildSite(L: SiteLayout): DemoSite {
  const stations: DemoStation[] = L.stations.map((s) => ({
    id: `${L.key}-${s.label.toLowerCase()}`,
    label: s.label,
    ...placePoint(L, s.along, s.across, 0),
  }));
  const main = stations[0];
  const mainPos: Position = { grid: main.grid, geo: main.geo };
  const targets: DemoTarget[] = [];
  const add = (markM: number, refl: Refl, across: number) => {
    const label = `${L.key === "yard" ? "Y" : "R"}${String(markM).padStart(3, "0")}-${refl}`;
    const p = placePoint(L, markM, across, BOARD_HEIGHT_M);
    const ref = referenceDistance({
      method: "coordinates",
      station: mainPos,
      target: { grid: p.grid, geo: p.geo },
      instrumentHeightM: STANDARD_INSTRUMENT_HEIGHT_M,
      targetHeightM: 0,
    });
    targets.push({
      id: `${L.key}-${label.toLowerCase()}`,
      key: `${L.key}:${markM}:${refl}`,
      label,
      markM,
      refl,
      reflectancePct: REFLECTANCE[refl],
      retro: refl === "R",
      referenceM: round(ref.distanceM, 4),
      ...p,
    });
  };
  for (const m of L.marks) {
    add(m, "D", -0.6);
    add(m, "G", 0);
    add(m, "W", 0.6);
  }
  add(L.retroAtM, "R", 1.8);
  const body: SiteBody & { id: string } = {
    id: L.key === "yard" ? DEMO_IDS.yard : DEMO_IDS.roadside,
    name: L.name,
    lat: L.origin.lat,
    lon: L.origin.lon,
    // issue 15: the survey's 1-D standard uncertainty of each point (invented: 1.5 mm stations, 2 mm boards)
    stations: stations.map((s) => ({ id: s.id, label: s.label, grid: s.grid, geo: s.geo, sigmaMm: 1.5 })),
    targets: targets.map((t) => ({
      id: t.id,
      label: t.label,
      reflectancePct: t.reflectancePct,
      ...(t.retro ? { retro: true } : {}),
      referenceM: t.referenceM,
      grid: t.grid,
      geo: t.geo,
      sigmaMm: 2,
    })),
  };
  return { key: L.key, body, targets, stations };
}

// ---------- sessions ----------
type Light = "overcast" | "sun-mixed" | "full-sun" | "dawn" | "shade" | "cloudy" | "dusk";

function illuminance(light: Light, rng: Rng): number {
  switch (light) {
    case "overcast":
      return rng.uniform(4, 12);
    case "sun-mixed":
      return rng.next() < 0.6 ? rng.uniform(55, 95) : rng.uniform(3, 8);
    case "full-sun":
      return rng.next() < 0.85 ? rng.uniform(60, 98) : rng.uniform(25, 40);
    case "dawn":
      return rng.uniform(1, 8);
    case "shade":
      return rng.uniform(3, 9);
    case "cloudy":
      return rng.uniform(12, 30);
    case "dusk":
      return rng.uniform(0.5, 3);
  }
}

type ReadingKind = "ranges" | "roundTrip" | "phase";
type SessionPlan = {
  key: string;
  sensor: SensorKey;
  site: SiteKey;
  startedAt: string;
  /** the air as it was (physics); `recorded` is what the crew typed */
  air: { airTempC: number; pressureHpa: number; humidityPct: number };
  recorded: AirInput;
  light: Light;
  note: string;
  marks: number[] | "all";
  retro: number;
  repeats: number;
  refls?: Refl[];
  readings: (rng: Rng) => { kind: ReadingKind; count: number };
  extra?: { markM: number; refl: Refl }[];
};

const allAir = (t: number, p: number, h: number) => ({ airTempC: t, pressureHpa: p, humidityPct: h });

const PLANS: SessionPlan[] = [
  {
    key: "s1",
    sensor: "roof",
    site: "yard",
    startedAt: "2026-05-04T08:10:00+02:00",
    air: allAir(12.4, 1008.6, 81),
    recorded: allAir(12.4, 1008.6, 81),
    light: "overcast",
    note: "Morning check at the yard before loading the van; low cloud.",
    marks: "all",
    retro: 0,
    repeats: 3,
    readings: () => ({ kind: "ranges", count: 2 }),
  },
  {
    key: "s2",
    sensor: "tripod",
    site: "yard",
    startedAt: "2026-05-04T11:30:00+02:00",
    air: allAir(19.8, 1007.9, 58),
    recorded: allAir(19.8, 1007.9, 58),
    light: "sun-mixed",
    note: "Sun breaking through; the near boards sit in the shed's shadow part of the time.",
    marks: "all",
    retro: 3,
    repeats: 3,
    readings: (rng) => (rng.next() < 0.2 ? { kind: "roundTrip", count: 2 } : { kind: "ranges", count: 3 }),
  },
  {
    key: "s3",
    sensor: "roof",
    site: "roadside",
    startedAt: "2026-05-05T09:00:00+02:00",
    air: allAir(16.2, 1003.1, 66),
    recorded: allAir(16.2, 1003.1, 66),
    light: "full-sun",
    note: "Van parked in the lay-by, traffic control out; clear sky.",
    marks: "all",
    retro: 3,
    repeats: 3,
    readings: (rng) => (rng.next() < 0.5 ? { kind: "roundTrip", count: 1 } : { kind: "ranges", count: 2 }),
  },
  {
    key: "s4",
    sensor: "tripod",
    site: "roadside",
    startedAt: "2026-05-05T13:40:00+02:00",
    air: allAir(23.5, 1002.4, 44),
    recorded: allAir(23.5, 1002.4, 44),
    light: "full-sun",
    note: "Full sun on the boards, a few passing clouds late on.",
    marks: "all",
    retro: 3,
    repeats: 3,
    readings: () => ({ kind: "ranges", count: 3 }),
  },
  {
    key: "s5",
    sensor: "tripod",
    site: "yard",
    startedAt: "2026-05-06T07:20:00+02:00",
    air: allAir(9.6, 1011.8, 88),
    recorded: allAir(9.6, 1011.8, 88),
    light: "dawn",
    note: "Repeat at first light to compare with yesterday's sunny session.",
    marks: "all",
    retro: 2,
    repeats: 2,
    readings: (rng) => (rng.next() < 0.4 ? { kind: "roundTrip", count: 2 } : { kind: "ranges", count: 3 }),
  },
  {
    key: "s6",
    sensor: "camera",
    site: "yard",
    startedAt: "2026-05-06T10:15:00+02:00",
    air: allAir(17.0, 1011.0, 62),
    recorded: allAir(17.0, 1011.0, 62),
    light: "shade",
    note: "Depth camera on its bracket, boards in the shade of the shed.",
    marks: [2, 5, 10, 20],
    retro: 0,
    repeats: 1,
    readings: () => ({ kind: "phase", count: 1 }),
  },
  {
    key: "s7",
    sensor: "camera",
    site: "roadside",
    startedAt: "2026-05-06T15:00:00+02:00",
    air: allAir(21.4, 1009.9, 50),
    recorded: allAir(21.4, 1009.9, 50),
    light: "cloudy",
    note: "Camera on the near boards; tried the retro target at the end of the lay-by too.",
    marks: [8, 15],
    retro: 1,
    repeats: 1,
    readings: () => ({ kind: "phase", count: 1 }),
  },
  {
    key: "s8",
    sensor: "roof",
    site: "roadside",
    startedAt: "2026-05-07T19:30:00+02:00",
    air: allAir(14.8, 1012.6, 74),
    // the hygrometer's battery was flat: humidity left out, so the server defaults it
    recorded: { airTempC: 14.8, pressureHpa: 1012.6 },
    light: "dusk",
    note: "Evening repeat at dusk; hygrometer battery flat, humidity not recorded.",
    marks: "all",
    retro: 2,
    repeats: 2,
    readings: (rng) => (rng.next() < 0.7 ? { kind: "roundTrip", count: 2 } : { kind: "ranges", count: 2 }),
  },
];

// ---------- the invented truth of each sensor ----------
type Truth = { errorMm: number; repeatSdMm: number };

function truthFor(sensor: SensorKey, D: number, t: DemoTarget, lux: number, rng: Rng): Truth {
  const dark = t.refl === "D";
  switch (sensor) {
    case "roof":
      return {
        errorMm: 1.2 + 0.006 * D + (t.retro ? -2 : 0) + rng.normal() * 2.4 * (dark ? 1.3 : 1),
        repeatSdMm: 1.5,
      };
    case "tripod": {
      const darkSun = dark && lux >= 50;
      return {
        errorMm: 0.4 + 0.004 * D + (t.retro ? -1 : 0) + rng.normal() * 1.1 + (darkSun ? 7.5 + rng.normal() * 1.8 : 0),
        repeatSdMm: darkSun ? 1.5 : 0.6,
      };
    }
    case "camera":
      return { errorMm: 3 + 0.3 * D, repeatSdMm: (2 + 0.4 * D) * (dark ? 1.8 : 1) };
  }
}

export type ShotMeta = {
  sensor: SensorKey;
  session: string;
  targetKey: string;
  reflectancePct: number;
  illuminanceKlux: number;
  darkSun: boolean;
  /** a target beyond the camera's combined unambiguous interval */
  beyondInterval: boolean;
  outlier: boolean;
};

export type DemoSession = SessionBody & { sensorKey: SensorKey; siteKey: SiteKey; projectId: string };

/**
 * issue 14: the firm works for two invented clients at once. The river valley road (Eastbank
 * Roads Office) uses all three sensors at both sites; the quarry stockpile survey (Kestrel
 * Aggregates) uses the tripod scanner, verified at the yard. The tripod's dawn repeat at the
 * yard (s5) was done for the quarry job, so the two projects share the sensor and the site and
 * the tablet asked which project; each client's viewer sees only their own project's shots.
 */
const QUARRY_SESSIONS = new Set(["s5"]);
export const DEMO_MEMBERS: Record<string, string[]> = {
  "river-valley-corridor": ["oren@fernhollow.example", "priya@fernhollow.example", "client.viewer@fernhollow.example"],
  "kestrel-quarry-stockpiles": ["oren@fernhollow.example", "priya@fernhollow.example", "maren.holt@kestrel-aggregates.example"],
};

export type DemoScenario = {
  users: DemoUser[];
  tape: TapeBody & { id: string };
  edm: EdmBody & { id: string };
  sensors: Record<SensorKey, SensorBody & { id: string }>;
  sites: Record<SiteKey, DemoSite>;
  project: ProjectBody & { id: string };
  /** Every client project (the river valley road first, then the quarry), with its members' e-mails. */
  projects: (ProjectBody & { id: string; memberEmails: string[] })[];
  deviceId: string;
  sessions: DemoSession[];
  shots: ShotBody[];
  meta: Record<string, ShotMeta>;
};

function isoPlus(startedAt: string, seconds: number): string {
  // keep the session's own offset (+02:00) on every shot time
  const offset = startedAt.slice(-6);
  const t = Date.parse(startedAt) + seconds * 1000;
  const local = new Date(t + (offset.startsWith("+") ? 1 : -1) * (Number(offset.slice(1, 3)) * 60 + Number(offset.slice(4, 6))) * 60000);
  return local.toISOString().slice(0, 19) + offset;
}

function positionNear(p: GeoBody, rng: Rng) {
  const dn = rng.normal() * 1.5;
  const de = rng.normal() * 1.5;
  return {
    lat: round(p.lat + dn / 111_200, 7),
    lon: round(p.lon + de / (111_320 * Math.cos((p.lat * Math.PI) / 180)), 7),
    accuracyM: round(rng.uniform(2, 5), 1),
  };
}

/** The whole demo, built afresh (and identically) on every call. */
export function buildDemoScenario(): DemoScenario {
  const rng = createRng(DEMO_SEED);
  const sites = { yard: buildSite(LAYOUTS.yard), roadside: buildSite(LAYOUTS.roadside) };
  const sensors = DEMO_SENSORS as Record<SensorKey, SensorBody & { id: string }>;
  const tapeSpec = { ...DEMO_TAPE };
  const sessions: DemoSession[] = [];
  const shots: ShotBody[] = [];
  const meta: Record<string, ShotMeta> = {};

  for (const plan of PLANS) {
    const site = sites[plan.site];
    const spec = sensorSpec(plan.sensor);
    const sessionId = id(`session:${plan.key}`);
    sessions.push({
      id: sessionId,
      sensorId: spec.id,
      siteId: site.body.id,
      startedAt: plan.startedAt,
      ...plan.recorded,
      note: plan.note,
      projectId: QUARRY_SESSIONS.has(plan.key) ? DEMO_IDS.quarry : DEMO_IDS.project,
      sensorKey: plan.sensor,
      siteKey: plan.site,
    } as DemoSession);

    const marks = plan.marks === "all" ? LAYOUTS[plan.site].marks : plan.marks;
    const queue: DemoTarget[] = [];
    for (let r = 0; r < plan.repeats; r++) {
      for (const m of marks)
        for (const refl of plan.refls ?? (["D", "G", "W"] as Refl[])) {
          queue.push(site.targets.find((t) => t.markM === m && t.refl === refl)!);
        }
    }
    const retro = site.targets.find((t) => t.retro)!;
    for (let r = 0; r < plan.retro; r++) queue.push(retro);

    let clock = 0;
    queue.forEach((target, i) => {
      clock += rng.int(40, 110);
      const shotId = id(`shot:${plan.key}:${i}`);
      const lux = round(illuminance(plan.light, rng), 1);
      const reference = referenceFor(plan, site, target, lux, tapeSpec, rng);
      const D = reference.distanceM;
      const truth = truthFor(plan.sensor, D, target, lux, rng);
      let errorMm = truth.errorMm;
      let outlier = false;
      if (plan.key === "s3" && target.markM === 120 && target.refl === "G" && i >= queue.length / 2 && !Object.values(meta).some((m) => m.outlier)) {
        errorMm += 28; // multipath off the crash barrier
        outlier = true;
      }
      const trueRange = D + errorMm / 1000;
      const readings = readingsFor(plan, spec, trueRange, target, lux, truth, rng);
      const shot: ShotBody = {
        id: shotId,
        sessionId,
        takenAt: isoPlus(plan.startedAt, clock),
        targetId: target.id,
        reference: reference.body,
        readings,
        reflectancePct: target.reflectancePct,
        illuminanceKlux: lux,
        incidenceDeg: rng.next() < 0.1 ? rng.int(25, 35) : rng.int(0, 12),
        position: positionNear(target.geo, rng),
        ...(outlier ? { note: "Possible multipath off the crash barrier." } : {}),
      };
      shots.push(shot);
      meta[shotId] = {
        sensor: plan.sensor,
        session: plan.key,
        targetKey: target.key,
        reflectancePct: target.reflectancePct,
        illuminanceKlux: lux,
        darkSun: target.refl === "D" && lux >= 50,
        beyondInterval: plan.sensor === "camera" && D > unambiguousCombined(spec, plan.air),
        outlier,
      };
    });
  }

  const river = {
    id: DEMO_IDS.project,
    name: "River valley corridor",
    client: "Eastbank Roads Office (invented)",
    sensorIds: [DEMO_IDS.roof, DEMO_IDS.tripod, DEMO_IDS.camera],
    siteIds: [DEMO_IDS.yard, DEMO_IDS.roadside],
    // issue 14: the firm's one tape and reference total station serve both jobs
    tapeIds: [DEMO_IDS.tape],
    edmIds: [DEMO_IDS.edm],
    notes: "Corridor survey of the valley road; sensors verified at the yard baseline and the roadside test range.",
  } as ProjectBody & { id: string };
  const quarry = {
    id: DEMO_IDS.quarry,
    name: "Kestrel quarry stockpiles",
    client: "Kestrel Aggregates (invented)",
    sensorIds: [DEMO_IDS.tripod],
    siteIds: [DEMO_IDS.yard],
    tapeIds: [DEMO_IDS.tape],
    edmIds: [DEMO_IDS.edm],
    notes: "Monthly stockpile volumes at an invented hillside quarry; the tripod scanner is verified at the yard baseline before each visit.",
  } as ProjectBody & { id: string };
  return {
    users: DEMO_USERS,
    tape: DEMO_TAPE as TapeBody & { id: string },
    edm: DEMO_EDM,
    sensors,
    sites,
    project: river,
    projects: [river, quarry].map((p) => ({ ...p, memberEmails: DEMO_MEMBERS[p.id]! })),
    deviceId: DEMO_DEVICE_ID,
    sessions,
    shots,
    meta,
  };
}

function unambiguousCombined(spec: SensorSpec, air: AirInput): number {
  return unambiguousIntervalM(spec.modulationHz, airState(air, spec.wavelengthNm).n);
}

function referenceFor(plan: SessionPlan, site: DemoSite, target: DemoTarget, lux: number, tape: TapeBody, rng: Rng): { body: ReferenceBody; distanceM: number } {
  const onYard = plan.site === "yard";
  const tapeable = onYard && !target.retro && target.markM <= 30;
  if (tapeable && rng.next() < 0.7) {
    const ends = target.markM >= 20;
    const use = {
      tapeId: tape.id!,
      tempC: round(plan.air.airTempC + (lux / 100) * 6 + rng.normal() * 0.5, 1),
      tensionN: ends ? 70 : 50,
      support: (ends ? "ends" : "ground") as "ends" | "ground",
      spans: ends && target.markM >= 30 ? 2 : 1,
    };
    // tape the surveyed distance (with a reading error of ~0.8 mm) as the crew would read it off
    const wanted = target.referenceM + rng.normal() * 0.0008;
    const corr = tapeCorrections({ distanceM: wanted, tape: tape, ...use });
    const L = round(wanted - corr.totalM, 3);
    const ref = referenceDistance({ method: "tape", distanceM: L, tape, ...use });
    return { body: { distanceM: L, method: "tape", tape: use }, distanceM: ref.distanceM };
  }
  if (!onYard && rng.next() < 0.7) {
    const station = rng.next() < 0.75 ? site.stations[0] : site.stations[1];
    const hi = round(rng.uniform(1.48, 1.62), 3);
    const ref = referenceDistance({
      method: "coordinates",
      station: { grid: station.grid, geo: station.geo },
      target: { grid: target.grid, geo: target.geo },
      instrumentHeightM: hi,
      targetHeightM: 0,
    });
    return {
      body: { method: "coordinates", stationId: station.id, instrumentHeightM: hi, targetHeightM: 0 },
      distanceM: ref.distanceM,
    };
  }
  const d = round(target.referenceM + rng.normal() * 0.0007, 4);
  return { body: { distanceM: d, method: "edm", edmId: DEMO_IDS.edm }, distanceM: d };
}

function readingsFor(plan: SessionPlan, spec: SensorSpec, trueRange: number, target: DemoTarget, lux: number, truth: Truth, rng: Rng): ReadingsBody {
  const choice = plan.readings(rng);
  // the sensor's own display precision: tripod 0.1 mm, roof 1 mm
  const decimals = plan.sensor === "tripod" ? 4 : 3;
  const each = (count: number) => Array.from({ length: count }, () => trueRange + (rng.normal() * truth.repeatSdMm) / 1000);
  if (choice.kind === "ranges") {
    return { rangesM: reportedRangesFor(spec, plan.air, each(choice.count)).map((r) => round(r, decimals)) };
  }
  if (choice.kind === "roundTrip") {
    return { roundTripNs: roundTripNsFor(spec, plan.air, each(choice.count)).map((t) => round(t, 5)) };
  }
  // CW: N = 4 correlation samples per frequency; the sample noise is set so that the range noise
  // of one frequency is the camera's invented σ (range = c₀·φ/(4πf·n), σ_φ ≈ σ_I·√(2/N)/A)
  const n = airState(plan.air, spec.wavelengthNm).n;
  const amplitude = Math.min(4000, Math.max(150, 3000 * (target.reflectancePct / 45) * (4 / Math.max(2, target.markM)) ** 2));
  const offset = 3000 + lux * 20;
  return {
    phase: spec.modulationHz.map((f) => {
      const metresPerRad = 299_792_458 / (4 * Math.PI * f * n);
      const sigmaPhi = truth.repeatSdMm / 1000 / metresPerRad;
      const sigmaI = (sigmaPhi * amplitude) / Math.sqrt(2 / 4);
      const p = phaseSamplesFor({ sensor: spec, air: plan.air, frequencyHz: f, rangeM: trueRange, amplitude, offset, count: 4, noise: () => rng.normal() * sigmaI });
      return { frequencyHz: f, samples: p.samples.map((s) => round(s, 2)) };
    }),
  };
}
