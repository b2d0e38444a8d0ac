// Phase and group refractive index of air by Ciddor (1996), "Refractive index of air: new
// equations for the visible and near infrared", Applied Optics 35(9), 1566–1573, with the
// saturation vapour pressure and enhancement factor it uses (Davis 1992 / Giacomo 1982).
// Used as a cross-check of the IAG 1999 group formula (ranging.md §2); not used for ranges.
import { requireFinite, requirePositive } from "./errors.ts";

export type CiddorInput = { tempC: number; pressureKpa: number; humidityPct: number; wavelengthNm: number; co2Ppm?: number };

const R = 8.31451; // J/(mol·K), as in Ciddor 1996

function compressibility(pPa: number, TK: number, xw: number): number {
  const t = TK - 273.15;
  const a0 = 1.58123e-6,
    a1 = -2.9331e-8,
    a2 = 1.1043e-10;
  const b0 = 5.707e-6,
    b1 = -2.051e-8;
  const c0 = 1.9898e-4,
    c1 = -2.376e-6;
  const d = 1.83e-11,
    e = -0.765e-8;
  const pt = pPa / TK;
  return 1 - pt * (a0 + a1 * t + a2 * t * t + (b0 + b1 * t) * xw + (c0 + c1 * t) * xw * xw) + pt * pt * (d + e * xw * xw);
}

/** Ciddor (1996) phase refractive index n of moist air. */
export function ciddorPhaseIndex(input: CiddorInput): number {
  const t = requireFinite(input.tempC, "tempC");
  const pPa = requirePositive(input.pressureKpa, "pressureKpa") * 1000;
  const h = requireFinite(input.humidityPct, "humidityPct") / 100;
  const lamUm = requirePositive(input.wavelengthNm, "wavelengthNm") / 1000;
  const xc = input.co2Ppm ?? 450;
  const TK = t + 273.15;
  const s2 = 1 / (lamUm * lamUm);
  // standard dry air (15 °C, 101 325 Pa, 0 % H2O, 450 ppm CO2) and standard water vapour (20 °C, 1333 Pa)
  const k0 = 238.0185,
    k1 = 5792105,
    k2 = 57.362,
    k3 = 167917;
  const nas = 1 + (k1 / (k0 - s2) + k3 / (k2 - s2)) * 1e-8;
  const naxs = 1 + (nas - 1) * (1 + 0.534e-6 * (xc - 450));
  const w0 = 295.235,
    w1 = 2.6422,
    w2 = -0.03238,
    w3 = 0.004028,
    cf = 1.022;
  const nws = 1 + cf * (w0 + w1 * s2 + w2 * s2 * s2 + w3 * s2 * s2 * s2) * 1e-8;
  // saturation vapour pressure over water (Davis 1992) and enhancement factor
  const svp = Math.exp(1.2378847e-5 * TK * TK - 1.9121316e-2 * TK + 33.93711047 - 6.3431645e3 / TK);
  const f = 1.00062 + 3.14e-8 * pPa + 5.6e-7 * t * t;
  const xw = (f * h * svp) / pPa;
  const Ma = 1e-3 * (28.9635 + 12.011e-6 * (xc - 400));
  const Mw = 0.018015;
  const Za = compressibility(101325, 288.15, 0);
  const Zw = compressibility(1333, 293.15, 1);
  const rhoAxs = (101325 * Ma) / (Za * R * 288.15);
  const rhoWs = (1333 * Mw) / (Zw * R * 293.15);
  const Z = compressibility(pPa, TK, xw);
  const rhoA = (pPa * Ma * (1 - xw)) / (Z * R * TK);
  const rhoW = (pPa * Mw * xw) / (Z * R * TK);
  return 1 + (rhoA / rhoAxs) * (naxs - 1) + (rhoW / rhoWs) * (nws - 1);
}

/** Group index n_g = n − λ·dn/dλ from the Ciddor phase index (central difference, Δλ = λ·1e-4). */
export function ciddorGroupIndex(input: CiddorInput): number {
  const l = input.wavelengthNm;
  const dl = l * 1e-4;
  const np = ciddorPhaseIndex({ ...input, wavelengthNm: l + dl });
  const nm = ciddorPhaseIndex({ ...input, wavelengthNm: l - dl });
  const n = ciddorPhaseIndex(input);
  return n - (l * (np - nm)) / (2 * dl);
}
