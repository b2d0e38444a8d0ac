// Field form pieces: big touch targets, the numeric keyboard, the unit beside every number,
// and the message right under the field it belongs to.
import type { ReactNode } from "react";

export function NumberField({
  id,
  label,
  unit,
  value,
  onChange,
  error,
  hint,
  required,
  placeholder,
  inputMode = "decimal",
}: {
  id: string;
  label: string;
  unit: string;
  value: string;
  onChange: (v: string) => void;
  error?: string;
  hint?: ReactNode;
  required?: boolean;
  placeholder?: string;
  inputMode?: "decimal" | "numeric";
}) {
  const described = [hint ? `${id}-hint` : null, error ? `${id}-error` : null].filter(Boolean).join(" ") || undefined;
  return (
    <div>
      <label htmlFor={id} className="field-label">
        {label}
        {required ? null : <span className="font-normal text-muted"> (optional)</span>}
      </label>
      <div className="flex items-stretch">
        <input
          id={id}
          name={id}
          className="input num rounded-r-none text-xl"
          inputMode={inputMode}
          autoComplete="off"
          enterKeyHint="next"
          value={value}
          placeholder={placeholder}
          aria-invalid={error ? true : undefined}
          aria-describedby={described}
          onChange={(e) => onChange(e.target.value)}
        />
        <span className="flex min-w-14 items-center justify-center rounded-r-md border-2 border-l-0 border-line bg-surface px-3 font-bold" aria-hidden="true">
          {unit}
        </span>
      </div>
      {hint ? (
        <p id={`${id}-hint`} className="mt-1 text-sm text-muted">
          {hint}
        </p>
      ) : null}
      {error ? (
        <p id={`${id}-error`} className="field-error" role="alert">
          {error}
        </p>
      ) : null}
    </div>
  );
}

export function SelectField({
  id,
  label,
  value,
  onChange,
  options,
  error,
  placeholder,
  optional,
}: {
  id: string;
  label: string;
  value: string;
  onChange: (v: string) => void;
  options: { value: string; label: string }[];
  error?: string;
  placeholder?: string;
  optional?: boolean;
}) {
  return (
    <div>
      <label htmlFor={id} className="field-label">
        {label}
        {optional ? <span className="font-normal text-muted"> (optional)</span> : null}
      </label>
      <select
        id={id}
        name={id}
        className="input text-lg"
        value={value}
        aria-invalid={error ? true : undefined}
        aria-describedby={error ? `${id}-error` : undefined}
        onChange={(e) => onChange(e.target.value)}
      >
        {placeholder !== undefined ? <option value="">{placeholder}</option> : null}
        {options.map((o) => (
          <option key={o.value} value={o.value}>
            {o.label}
          </option>
        ))}
      </select>
      {error ? (
        <p id={`${id}-error`} className="field-error" role="alert">
          {error}
        </p>
      ) : null}
    </div>
  );
}

/** A row of large radio buttons. */
export function Choice<T extends string>({
  name,
  legend,
  value,
  onChange,
  options,
  error,
}: {
  name: string;
  legend: string;
  value: T;
  onChange: (v: T) => void;
  options: { value: T; label: string }[];
  error?: string;
}) {
  return (
    <fieldset aria-describedby={error ? `${name}-error` : undefined}>
      <legend className="field-label">{legend}</legend>
      <div className="flex flex-wrap gap-2">
        {options.map((o) => (
          <label
            key={o.value}
            className={`flex min-h-11 cursor-pointer items-center gap-2 rounded-md border-2 px-4 py-2 font-bold ${value === o.value ? "border-accent bg-accent text-accent-fg" : "border-line bg-bg"}`}
          >
            <input type="radio" className="h-5 w-5" name={name} value={o.value} checked={value === o.value} onChange={() => onChange(o.value)} />
            {o.label}
          </label>
        ))}
      </div>
      {error ? (
        <p id={`${name}-error`} className="field-error" role="alert">
          {error}
        </p>
      ) : null}
    </fieldset>
  );
}

/** "25,004" and "25.004" both mean 25.004 m; empty is "not given". */
export function parseNum(s: string): number | undefined {
  const t = s.trim().replace(/\s+/g, "");
  if (t === "") return undefined;
  const normal = t.includes(".") ? t : t.replace(",", ".");
  const n = Number(normal);
  return Number.isFinite(n) ? n : Number.NaN;
}

/** A list typed as "1.2, 3.4 5.6" or one per line (in a list, decimals take a point). */
export function parseList(s: string): number[] {
  return s
    .split(/[\s,;]+/)
    .filter(Boolean)
    .map((x) => {
      const n = Number(x);
      return Number.isFinite(n) ? n : Number.NaN;
    });
}

// toLocaleString with options builds a new Intl.NumberFormat on every call (~0.1 ms): a list of
// 1,200 shots re-rendered after a sync spent most of its time there. One formatter per digits.
const formatters = new Map<number, Intl.NumberFormat>();

export function fmt(n: number | null | undefined, digits: number) {
  if (n == null || !Number.isFinite(n)) return "—";
  let f = formatters.get(digits);
  if (!f) {
    f = new Intl.NumberFormat("en-GB", { minimumFractionDigits: digits, maximumFractionDigits: digits });
    formatters.set(digits, f);
  }
  return f.format(n);
}
