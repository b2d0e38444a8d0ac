// Builders of api.md-shaped bodies (registry, sync), shared by the demo seed and the tests'
// factories: `buildSensorBody({ …overrides })`, `buildShotBody({ sessionId, … })`.
// Also the inverse of the server's range maths, so invented readings come out at a chosen
// range after the server's own corrections: reported ranges, round-trip times and
// correlation samples. Pure: no I/O, no Node-only imports (runs in tests and the browser).
import type { ReferenceRecord, SessionRecord, ShotRecord, TapeUse } from "~/contract";
import { airState, C0, firstVelocityCorrectionPpm, type AirInput, type PhaseReading, type Readings, type SensorSpec } from "~/domain";

// ---------- body shapes of api.md ----------
export type GridBody = { e: number; n: number; h: number };
export type GeoBody = { lat: number; lon: number; h: number };

export type SensorBody = {
  id?: string;
  label: string;
  serial: string;
  kind: "pulsed" | "cw";
  wavelengthNm: number;
  modulationHz?: number[];
  appliesAirCorrection: boolean;
  assumedRefractivity?: number;
  toleranceMm: number;
  tolerancePpm: number;
  outdoor?: boolean;
  calibrationDue?: string;
  // issue 15
  laserClass?: "1" | "1M" | "2" | "2M" | "3R" | "3B" | "4";
  certificate?: CertificateBody;
};

/** issue 15: a calibration certificate (api.md v1.1). */
export type CertificateBody = { number: string; laboratory: string; issued: string; due: string };
export type EdmBody = { id?: string; label: string; serial: string; uncertaintyMm: number; uncertaintyPpm?: number; certificate?: CertificateBody };

export type TapeBody = {
  id?: string;
  label: string;
  standardTempC: number;
  standardTensionN: number;
  areaMm2: number;
  modulusGPa: number;
  weightNPerM: number;
  calibrationPpm: number;
  uncertaintyMm?: number;
  uncertaintyPpm?: number;
  certificate?: CertificateBody;
};

export type TargetBody = {
  id?: string;
  label: string;
  reflectancePct: number;
  retro?: boolean;
  referenceM?: number;
  grid?: GridBody;
  geo?: GeoBody;
  sigmaMm?: number;
};
export type StationBody = { id?: string; label: string; grid?: GridBody; geo?: GeoBody; sigmaMm?: number };
export type SiteBody = { id?: string; name: string; lat?: number; lon?: number; targets: TargetBody[]; stations?: StationBody[] };

// The field records are the contract's (app/contract/sync.ts): one shape for tablet, server and seed.
export type SessionBody = SessionRecord;
export type { TapeUse };
export type ReferenceBody = ReferenceRecord;
export type PhaseBody = PhaseReading;
export type ReadingsBody = Readings;
export type ShotBody = ShotRecord;

export type SyncBody = { deviceId: string; sessions: SessionBody[]; shots: ShotBody[] };

// ---------- deterministic randomness ----------
/** A small seeded PRNG (mulberry32): the same stream for the same seed, everywhere. */
export function createRng(seed: number) {
  let a = seed >>> 0;
  const next = () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
  let spare: number | null = null;
  return {
    /** uniform in [0, 1) */
    next,
    uniform: (lo: number, hi: number) => lo + (hi - lo) * next(),
    int: (lo: number, hi: number) => lo + Math.floor((hi - lo + 1) * next()),
    pick: <T>(xs: readonly T[]): T => xs[Math.floor(next() * xs.length)],
    /** standard normal (Box–Muller, the second value kept for the next call) */
    normal: (): number => {
      if (spare != null) {
        const s = spare;
        spare = null;
        return s;
      }
      let u = 0;
      while (u === 0) u = next();
      const v = next();
      const r = Math.sqrt(-2 * Math.log(u));
      spare = r * Math.sin(2 * Math.PI * v);
      return r * Math.cos(2 * Math.PI * v);
    },
  };
}
export type Rng = ReturnType<typeof createRng>;

/** A UUID-shaped id that depends only on `name` (two 64-bit FNV-1a hashes), version nibble 4. */
export function stableUuid(name: string): string {
  const h = (seed: bigint) => {
    let x = seed;
    for (let i = 0; i < name.length; i++) {
      x ^= BigInt(name.charCodeAt(i));
      x = (x * 0x100000001b3n) & 0xffffffffffffffffn;
    }
    return x.toString(16).padStart(16, "0");
  };
  const hex = h(0xcbf29ce484222325n) + h(0x84222325cbf29ce4n);
  const variant = ((parseInt(hex[16], 16) & 0x3) | 0x8).toString(16);
  return `${hex.slice(0, 8)}-${hex.slice(8, 12)}-4${hex.slice(13, 16)}-${variant}${hex.slice(17, 20)}-${hex.slice(20, 32)}`;
}

function randomId() {
  return globalThis.crypto.randomUUID();
}

let seq = 0;
const nextSeq = () => ++seq;

// ---------- registry bodies ----------
export function buildSensorBody(overrides: Partial<SensorBody> = {}): SensorBody {
  const n = nextSeq();
  return {
    label: `Test scanner ${n}`,
    serial: `TEST-${String(n).padStart(5, "0")}`,
    kind: "pulsed",
    wavelengthNm: 905,
    appliesAirCorrection: true,
    toleranceMm: 5,
    tolerancePpm: 10,
    outdoor: true,
    ...overrides,
  };
}

export function buildTapeBody(overrides: Partial<TapeBody> = {}): TapeBody {
  return {
    label: `Test tape ${nextSeq()}`,
    standardTempC: 20,
    standardTensionN: 50,
    areaMm2: 2,
    modulusGPa: 200,
    weightNPerM: 0.16,
    calibrationPpm: 0,
    ...overrides,
  };
}

export function buildTargetBody(overrides: Partial<TargetBody> = {}): TargetBody {
  return { label: `T${nextSeq()}`, reflectancePct: 45, referenceM: 25, ...overrides };
}

export function buildStationBody(overrides: Partial<StationBody> = {}): StationBody {
  return { label: `S${nextSeq()}`, grid: { e: 1000, n: 5000, h: 100 }, ...overrides };
}

/** A site with one station and a dark, a grey and a white target on a line 25 m out. */
export function buildSiteBody(overrides: Partial<SiteBody> = {}): SiteBody {
  const n = nextSeq();
  return {
    name: `Test range ${n}`,
    stations: [buildStationBody({ label: "S1", grid: { e: 1000, n: 5000, h: 100 } })],
    targets: [
      buildTargetBody({ label: "D25", reflectancePct: 10, referenceM: 25, grid: { e: 1025, n: 5000, h: 100 } }),
      buildTargetBody({ label: "G25", reflectancePct: 45, referenceM: 25, grid: { e: 1000, n: 5025, h: 100 } }),
      buildTargetBody({ label: "W25", reflectancePct: 88, referenceM: 25, grid: { e: 975, n: 5000, h: 100 } }),
    ],
    ...overrides,
  };
}

export type ProjectBody = {
  id?: string;
  name: string;
  client?: string;
  minShots?: number;
  coverageK?: number;
  minWithinPct?: number;
  rangeBandEdgesM?: number[];
  sensorIds: string[];
  siteIds: string[];
  notes?: string;
};

export function buildProjectBody(overrides: Partial<ProjectBody> = {}): ProjectBody {
  return { name: `Test project ${nextSeq()}`, sensorIds: [], siteIds: [], ...overrides };
}

// ---------- field records ----------
/** A session; `sensorId` and `siteId` should be given (defaults are placeholders). */
export function buildSessionBody(overrides: Partial<SessionBody> = {}): SessionBody {
  return {
    id: randomId(),
    sensorId: "sensor-id",
    siteId: "site-id",
    startedAt: "2026-05-04T08:10:00+02:00",
    airTempC: 18.5,
    pressureHpa: 1004.2,
    humidityPct: 62,
    ...overrides,
  };
}

/** A shot measured by EDM at 25.004 m with two reported ranges; `sessionId` should be given. */
export function buildShotBody(overrides: Partial<ShotBody> = {}): ShotBody {
  return {
    id: randomId(),
    sessionId: "session-id",
    takenAt: "2026-05-04T08:15:00+02:00",
    reference: { distanceM: 25.004, method: "edm" },
    readings: { rangesM: [25.011, 25.009] },
    reflectancePct: 45,
    illuminanceKlux: 12,
    ...overrides,
  };
}

export function buildSyncBody(parts: Partial<SyncBody> = {}): SyncBody {
  return { deviceId: "tablet-test", sessions: [], shots: [], ...parts };
}

// ---------- readings that come out at a chosen range ----------
type RangeSensor = Pick<SensorSpec, "wavelengthNm" | "appliesAirCorrection" | "assumedRefractivity">;

/**
 * Reported ranges the server corrects back to `rangesM` (m): as is for a sensor applying its own
 * air correction, else D′ = D / (1 + (N_ref − N_L)·1e-6) with the session's air (ranging.md §1–2).
 */
export function reportedRangesFor(sensor: RangeSensor, air: AirInput, rangesM: number[]): number[] {
  if (sensor.appliesAirCorrection) return [...rangesM];
  const nl = airState(air, sensor.wavelengthNm).groupRefractivity;
  const k = firstVelocityCorrectionPpm(sensor.assumedRefractivity ?? 0, nl);
  return rangesM.map((d) => d / (1 + k * 1e-6));
}

/** Round-trip times (ns) of ranges R (m) in the session's air: t = 2·n·R / c₀. */
export function roundTripNsFor(sensor: Pick<SensorSpec, "wavelengthNm">, air: AirInput, rangesM: number[]): number[] {
  const n = airState(air, sensor.wavelengthNm).n;
  return rangesM.map((r) => ((2 * n * r) / C0) * 1e9);
}

/**
 * N equally spaced correlation samples Iₖ = B + A·cos(φ − 2πk/N) + noise of a target at `rangeM`,
 * with φ = 4π·f·n·R / c₀ (mod 2π) — the model of ranging.md §1. `noise` gives one sample's
 * additive noise (counts); leave it out for exact samples.
 */
export function phaseSamplesFor(opts: {
  sensor: Pick<SensorSpec, "wavelengthNm">;
  air: AirInput;
  frequencyHz: number;
  rangeM: number;
  amplitude: number;
  offset: number;
  count?: number;
  noise?: () => number;
}): PhaseBody {
  const N = opts.count ?? 4;
  const n = airState(opts.air, opts.sensor.wavelengthNm).n;
  const phi = ((4 * Math.PI * opts.frequencyHz * n * opts.rangeM) / C0) % (2 * Math.PI);
  const samples: number[] = [];
  for (let k = 0; k < N; k++) {
    const d = (2 * Math.PI * k) / N;
    samples.push(opts.offset + opts.amplitude * Math.cos(phi - d) + (opts.noise ? opts.noise() : 0));
  }
  return { frequencyHz: opts.frequencyHz, samples };
}

/** Rounds to a fixed number of decimals, as an instrument's display or log would. */
export function round(x: number, decimals: number): number {
  const f = 10 ** decimals;
  return Math.round(x * f) / f;
}
