// Speed of light in air.
// Group refractivity: IAG resolution of 1999 (Rüeger, "Refractive indices of light, infrared
// and radio waves in the atmosphere"); water-vapour pressure: Buck (1981), J. Applied
// Meteorology 20; first velocity correction K = N_ref − N_L (ppm).
import { DomainError, requireFinite, requirePositive } from "./errors.ts";
import type { Air, AirField, AirInput } from "./types.ts";

export const AIR_DEFAULTS = { airTempC: 20, pressureHpa: 1013.25, humidityPct: 50 } as const;
export const AIR_LIMITS = {
  airTempC: [-80, 70],
  pressureHpa: [300, 1200],
  humidityPct: [0, 100],
} as const;

/** IAG 1999 group refractivity N_g (ppm) of standard air (0 °C, 1013.25 hPa, dry, 0.0375 % CO₂). */
export function groupRefractivityIag(wavelengthNm: number, path = "sensor.wavelengthNm"): number {
  const nm = requirePositive(wavelengthNm, path, "wavelength (nm)");
  const l = nm / 1000; // µm
  const l2 = l * l;
  return 287.6155 + 4.8866 / l2 + 0.068 / (l2 * l2);
}

/** Buck (1981) saturation vapour pressure over water e_w (hPa), enhancement factor included. */
export function buckVapourPressure(tempC: number, pressureHpa: number): number {
  const t = requireFinite(tempC, "airTempC", "air temperature (°C)");
  const p = requirePositive(pressureHpa, "pressureHpa", "pressure (hPa)");
  return (1.0007 + 3.46e-6 * p) * 6.1121 * Math.exp((17.502 * t) / (240.97 + t));
}

/** N_L (ppm) at the session's air, from N_g: (273.15/1013.25)·N_g·p/T − 11.27·e/T. */
export function airGroupRefractivity(groupRefractivityStd: number, tempC: number, pressureHpa: number, humidityPct: number): number {
  const T = tempC + 273.15;
  const e = (humidityPct / 100) * buckVapourPressure(tempC, pressureHpa);
  return ((273.15 / 1013.25) * groupRefractivityStd * pressureHpa) / T - (11.27 * e) / T;
}

function pick(input: AirInput, field: AirField, defaulted: AirField[]): number {
  const v = input[field];
  if (v === undefined || v === null) {
    defaulted.push(field);
    return AIR_DEFAULTS[field];
  }
  const [lo, hi] = AIR_LIMITS[field];
  const x = requireFinite(v, field, field);
  if (x < lo || x > hi) {
    throw new DomainError(field, "impossible_air", `${field} must lie between ${lo} and ${hi} (got ${x})`);
  }
  return x;
}

/** The session's air: each missing value defaults on its own and is reported in `defaulted`. */
export function airState(input: AirInput | null | undefined, wavelengthNm: number): Air {
  const src = input ?? {};
  const defaulted: AirField[] = [];
  const tempC = pick(src, "airTempC", defaulted);
  const pressureHpa = pick(src, "pressureHpa", defaulted);
  const humidityPct = pick(src, "humidityPct", defaulted);
  const ng = groupRefractivityIag(wavelengthNm);
  const groupRefractivity = airGroupRefractivity(ng, tempC, pressureHpa, humidityPct);
  return { tempC, pressureHpa, humidityPct, defaulted, groupRefractivity, n: 1 + groupRefractivity * 1e-6 };
}

/** First velocity correction K = N_ref − N_L (ppm); corrected D = D′·(1 + K·1e-6). */
export function firstVelocityCorrectionPpm(assumedRefractivity: number, groupRefractivity: number): number {
  const nref = requireFinite(assumedRefractivity, "sensor.assumedRefractivity", "assumed refractivity (ppm)");
  const nl = requireFinite(groupRefractivity, "groupRefractivity", "group refractivity (ppm)");
  return nref - nl;
}
