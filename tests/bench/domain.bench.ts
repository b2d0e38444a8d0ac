// Bench of the ranging core: sensorReport over 100 000 synthetic shots (deterministic PRNG).
// Run: npx tsx tests/bench/domain.bench.ts — or import { run } from a top-level bench runner.
import { DEFAULT_RULE, sensorReport, type ReportShot, type SensorSpec } from "../../app/domain/index.ts";
import { createRng } from "../../app/seed/builders.ts";

const seededUniform = (seed: number) => createRng(seed).next;

const SHOTS = 100_000;
const RUNS = 7;

export function buildShots(n = SHOTS, seed = 42): ReportShot[] {
  const rnd = seededUniform(seed);
  const gauss = () => Math.sqrt(-2 * Math.log(1 - rnd())) * Math.cos(2 * Math.PI * rnd());
  const shots: ReportShot[] = new Array(n);
  const sessions = 200;
  const base = Date.parse("2026-03-01T08:00:00Z");
  for (let i = 0; i < n; i++) {
    const s = i % sessions;
    const referenceM = 1 + rnd() * 180;
    const errorMm = 1.2 + 2.5 * gauss() + (rnd() < 0.002 ? 40 * gauss() : 0);
    shots[i] = {
      id: `shot-${i}`,
      takenAt: new Date(base + s * 86_400_000 + i * 1000).toISOString(),
      sessionId: `session-${s}`,
      sessionStartedAt: new Date(base + s * 86_400_000).toISOString(),
      referenceM,
      rangeM: referenceM + errorMm / 1000,
      errorMm,
      repeatabilityMm: rnd() < 0.5 ? null : Math.abs(gauss()),
      reflectancePct: [10, 50, 85][i % 3],
      retro: i % 97 === 0,
      illuminanceKlux: i % 11 === 0 ? null : rnd() * 110,
      excluded: i % 500 === 0,
      wrap: false,
      airDefaulted: false,
    };
  }
  return shots;
}

export async function run(): Promise<string[]> {
  const sensor: SensorSpec = { id: "bench", kind: "pulsed", wavelengthNm: 905, modulationHz: [], appliesAirCorrection: true, assumedRefractivity: 0, toleranceMm: 5, tolerancePpm: 10, outdoor: true };
  const shots = buildShots();
  sensorReport({ sensor, rule: DEFAULT_RULE, shots, lastSignedOffBiasMm: 1 }); // warm-up
  const times: number[] = [];
  const cpu: number[] = [];
  let verdict = "";
  const hasCpu = typeof process !== "undefined" && typeof process.cpuUsage === "function";
  for (let r = 0; r < RUNS; r++) {
    const c0 = hasCpu ? process.cpuUsage() : null;
    const t0 = performance.now();
    const rep = sensorReport({ sensor, rule: DEFAULT_RULE, shots, lastSignedOffBiasMm: 1 });
    times.push(performance.now() - t0);
    if (c0) {
      const c = process.cpuUsage(c0);
      cpu.push((c.user + c.system) / 1000);
    }
    verdict = rep.verdict;
  }
  cpu.sort((a, b) => a - b);
  times.sort((a, b) => a - b);
  const med = times[Math.floor(times.length / 2)];
  return [
    `domain: sensor report over ${SHOTS} shots: ${med.toFixed(1)} ms (${Math.round(SHOTS / med)} shots/ms), median of ${RUNS} runs, best ${times[0].toFixed(1)} ms, worst ${times[times.length - 1].toFixed(1)} ms, verdict ${verdict}${cpu.length ? `, CPU ${cpu[Math.floor(cpu.length / 2)].toFixed(1)} ms` : ""}`,
  ];
}

const isMain = typeof process !== "undefined" && process.argv[1] && import.meta.url === new URL(`file://${process.argv[1]}`).href;
if (isMain) {
  for (const line of await run()) console.log(line);
}
