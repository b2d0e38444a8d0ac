// Instant feedback on a shot from the shared ranging core: error, limit, within or not (a word
// and a shape, never colour alone) and the phase-wrap warning.
import { VerdictShape } from "~/components/verdict-badge";
import type { ShotPreview } from "~/offline/types";
import { fmt } from "./inputs";

const AIR_WORDS: Record<string, string> = { airTempC: "20 °C", pressureHpa: "1013.25 hPa", humidityPct: "50 % humidity" };

export function WithinWord({ within }: { within: boolean }) {
  return (
    <span className={`inline-flex items-center gap-1.5 font-bold ${within ? "text-pass" : "text-fail"}`} data-within={within}>
      <VerdictShape verdict={within ? "pass" : "fail"} size={20} />
      {within ? "Within limit" : "Outside limit"}
    </span>
  );
}

/** "+2.0 mm", "−18,000.0 mm"; a value that rounds to zero is "0.0 mm", never "−0.0 mm". */
export function signedMm(n: number, digits = 1) {
  const shown = fmt(Math.abs(n), digits);
  const zero = Number(Math.abs(n).toFixed(digits)) === 0;
  return `${zero ? "" : n > 0 ? "+" : n < 0 ? "−" : ""}${shown} mm`;
}

export function ShotFeedback({
  preview,
  title = "Instant check",
  compact = false,
  implausible = false,
}: {
  preview: ShotPreview;
  title?: string;
  /** Two columns, for the narrow panel beside the form. */
  compact?: boolean;
  /** ranging.md §9: |error| over a metre, most often a unit slip. */
  implausible?: boolean;
}) {
  return (
    <div className="space-y-2" data-testid="shot-feedback">
      <h3 className="text-lg font-bold">{title}</h3>
      <dl className={`num grid grid-cols-2 gap-x-6 gap-y-1 text-lg ${compact ? "" : "sm:grid-cols-4"}`}>
        <div>
          <dt className="text-sm text-muted">Range error</dt>
          <dd className="text-2xl font-bold" data-testid="error-mm">
            {signedMm(preview.errorMm)}
          </dd>
        </div>
        <div>
          <dt className="text-sm text-muted">Limit</dt>
          <dd className="text-2xl font-bold" data-testid="limit-mm">
            ±{fmt(preview.limitMm, 1)} mm
          </dd>
        </div>
        <div>
          <dt className="text-sm text-muted">Reference</dt>
          <dd>{fmt(preview.referenceM, 4)} m</dd>
        </div>
        <div>
          <dt className="text-sm text-muted">Sensor range</dt>
          <dd>{fmt(preview.rangeM, 4)} m</dd>
        </div>
      </dl>
      <p className="text-xl">
        <WithinWord within={preview.within} />
      </p>
      {implausible ? (
        <p className="flex items-center gap-2 font-bold text-warn" data-testid="implausible">
          <VerdictShape verdict="insufficient" size={20} />
          Implausible: over a metre off — mm typed as m?
        </p>
      ) : null}
      {preview.wrap ? (
        <p className="flex items-center gap-2 font-bold text-warn" role="alert">
          <VerdictShape verdict="insufficient" size={20} />
          Possible phase wrap: the error is close to a whole number of unambiguous intervals. Check the reading before you leave the target.
        </p>
      ) : null}
      {preview.airDefaulted.length ? <p className="text-sm text-muted">Air not entered for this session, so {preview.airDefaulted.map((f) => AIR_WORDS[f] ?? f).join(", ")} assumed.</p> : null}
    </div>
  );
}
