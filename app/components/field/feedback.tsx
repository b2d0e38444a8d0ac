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

export function signedMm(n: number) {
  return `${n > 0 ? "+" : n < 0 ? "−" : ""}${fmt(Math.abs(n), 1)} mm`;
}

export function ShotFeedback({ preview, title = "Instant check" }: { preview: ShotPreview; title?: string }) {
  return (
    <div className="space-y-2" data-testid="shot-feedback">
      <h3 className="text-lg font-bold">{title}</h3>
      <dl className="num grid grid-cols-2 gap-x-6 gap-y-1 text-lg sm:grid-cols-4">
        <div>
          <dt className="text-sm text-muted">Range error</dt>
          <dd className="text-2xl font-bold" data-testid="error-mm">{signedMm(preview.errorMm)}</dd>
        </div>
        <div>
          <dt className="text-sm text-muted">Limit</dt>
          <dd className="text-2xl font-bold" data-testid="limit-mm">±{fmt(preview.limitMm, 1)} mm</dd>
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
      {preview.wrap ? (
        <p className="flex items-center gap-2 font-bold text-warn" role="alert">
          <VerdictShape verdict="insufficient" size={20} />
          Possible phase wrap: the error is close to a whole number of unambiguous intervals. Check the reading before you
          leave the target.
        </p>
      ) : null}
      {preview.airDefaulted.length ? (
        <p className="text-sm text-muted">
          Air not entered for this session, so {preview.airDefaulted.map((f) => AIR_WORDS[f] ?? f).join(", ")} assumed.
        </p>
      ) : null}
    </div>
  );
}
