// Domain input errors with a field path relative to the shot (e.g. "readings.rangesM.0").
// No published formula here: the validation helpers every computation of ranging.md uses.

export class DomainError extends Error {
  path: string;
  code: string;
  constructor(path: string, code: string, message: string) {
    super(path ? `${path}: ${message}` : message);
    this.name = "DomainError";
    this.path = path;
    this.code = code;
  }
}

/** Throws unless `v` is a finite number. */
export function requireFinite(v: unknown, path: string, what = "value"): number {
  if (typeof v !== "number" || !Number.isFinite(v)) {
    throw new DomainError(path, "not_finite", `${what} must be a finite number (got ${String(v)})`);
  }
  return v;
}

/** Throws unless `v` is a finite number > 0. */
export function requirePositive(v: unknown, path: string, what = "value"): number {
  const x = requireFinite(v, path, what);
  if (x <= 0) throw new DomainError(path, "not_positive", `${what} must be greater than zero (got ${x})`);
  return x;
}

/** Throws unless `v` is a finite number ≥ 0. */
export function requireNonNegative(v: unknown, path: string, what = "value"): number {
  const x = requireFinite(v, path, what);
  if (x < 0) throw new DomainError(path, "negative", `${what} must not be negative (got ${x})`);
  return x;
}

/** Throws unless `v` is a finite number in [lo, hi]. */
export function requireRange(v: unknown, lo: number, hi: number, path: string, what = "value"): number {
  const x = requireFinite(v, path, what);
  if (x < lo || x > hi) throw new DomainError(path, "out_of_range", `${what} must lie between ${lo} and ${hi} (got ${x})`);
  return x;
}

/** Throws unless `v` is a non-empty array of finite numbers; returns it. */
export function requireFiniteList(v: unknown, path: string, what = "list"): number[] {
  if (!Array.isArray(v)) throw new DomainError(path, "not_list", `${what} must be a list of numbers`);
  if (v.length === 0) throw new DomainError(path, "empty", `${what} must not be empty`);
  for (let i = 0; i < v.length; i++) requireFinite(v[i], `${path}${path ? "." : ""}${i}`, `${what} item ${i}`);
  return v as number[];
}
