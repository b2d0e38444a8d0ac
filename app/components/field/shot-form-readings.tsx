// The log-shot form's readings card: ranges, round-trip times or a CW sensor's correlation samples
// per registered frequency, each box named by its record path (field-errors.ts). Issue 13: split
// out of shot-form.tsx.
import type { PreviewContext } from "~/offline/preview";
import { Choice, NumberField, fmt } from "./inputs";
import type { ReadingKind, SetField, ShotFormState } from "./shot-form-state";

export function ReadingsCard({ f, set, errors, ctx }: { f: ShotFormState; set: SetField; errors: Record<string, string>; ctx: PreviewContext }) {
  const sensor = ctx.sensor;
  const kinds: { value: ReadingKind; label: string }[] =
    sensor?.kind === "cw"
      ? [
          { value: "rangesM", label: "Ranges (m)" },
          { value: "phase", label: "Correlation samples" },
        ]
      : [
          { value: "rangesM", label: "Ranges (m)" },
          { value: "roundTripNs", label: "Round-trip times (ns)" },
        ];

  const listField = (key: "ranges" | "roundTrips", prefix: string, path: "readings.rangesM" | "readings.roundTripNs", label: string, unit: string) => (
    <div className="space-y-3">
      {f[key].map((v, i) => (
        <div key={i} className="flex items-end gap-2">
          <div className="flex-1">
            <NumberField
              id={`f-${prefix}-${i}`}
              label={`${label}${f[key].length > 1 ? ` ${i + 1}` : ""} (${unit})`}
              unit={unit}
              value={v}
              required
              error={errors[`${path}.${i}`]}
              onChange={(nv) =>
                set(
                  key,
                  f[key].map((x, j) => (j === i ? nv : x)),
                )
              }
            />
          </div>
          {f[key].length > 1 ? (
            <button
              type="button"
              className="btn-secondary"
              aria-label={`Remove ${label.toLowerCase()} ${i + 1}`}
              onClick={() =>
                set(
                  key,
                  f[key].filter((_, j) => j !== i),
                )
              }
            >
              ✕
            </button>
          ) : null}
        </div>
      ))}
      <button type="button" className="btn-secondary" onClick={() => set(key, [...f[key], ""])}>
        + Add a reading
      </button>
    </div>
  );

  return (
    <section className="card order-2 space-y-4">
      <h2 className="text-xl font-bold">Sensor readings</h2>
      <Choice name="f-kind" legend="The sensor gives" value={f.readingKind} onChange={(v) => set("readingKind", v)} options={kinds} />
      {f.readingKind === "rangesM" ? listField("ranges", "range", "readings.rangesM", "Sensor range", "m") : null}
      {f.readingKind === "roundTripNs" ? listField("roundTrips", "rtt", "readings.roundTripNs", "Round-trip time", "ns") : null}
      {f.readingKind === "phase" ? (
        <div className="space-y-3">
          {f.phase.length === 0 ? <p className="field-error">This sensor has no modulation frequencies in the registry.</p> : null}
          {f.phase.map((p, i) => (
            <div key={i}>
              <label htmlFor={`f-phase-${i}`} className="field-label">
                Correlation samples at {fmt(Number(p.frequencyHz) / 1e6, 3)} MHz
              </label>
              <textarea
                id={`f-phase-${i}`}
                className="input num"
                rows={2}
                inputMode="decimal"
                value={p.samples}
                aria-invalid={errors[`readings.phase.${i}`] ? true : undefined}
                aria-describedby={`f-phase-${i}-hint${errors[`readings.phase.${i}`] ? ` f-phase-${i}-error` : ""}`}
                onChange={(e) =>
                  set(
                    "phase",
                    f.phase.map((x, j) => (j === i ? { ...x, samples: e.target.value } : x)),
                  )
                }
              />
              <p id={`f-phase-${i}-hint`} className="mt-1 text-sm text-muted">
                Equally spaced samples over one period, separated by spaces or commas (decimals with a point).
              </p>
              {errors[`readings.phase.${i}`] ? (
                <p id={`f-phase-${i}-error`} className="field-error" role="alert">
                  {errors[`readings.phase.${i}`]}
                </p>
              ) : null}
            </div>
          ))}
        </div>
      ) : null}
    </section>
  );
}
