// A session's own fields (sensor, site, project, air, note), shared by the start screen and
// the fix screen of a refused session. Ids are the record's paths, so the server's messages
// land on the field they name.
import { useMemo, type ReactNode } from "react";
import { AIR_DEFAULTS } from "~/domain";
import type { ReferenceCopy } from "~/offline/reference";
import type { SyncSessionRecord } from "~/offline/types";
import { NumberField, parseNum, SelectField } from "./inputs";

export type SessionValues = { sensorId: string; siteId: string; projectId: string; airTempC: string; pressureHpa: string; humidityPct: string; note: string };

export const EMPTY_SESSION: SessionValues = { sensorId: "", siteId: "", projectId: "", airTempC: "", pressureHpa: "", humidityPct: "", note: "" };

export function sessionValuesOf(r: SyncSessionRecord): SessionValues {
  const str = (n: number | null | undefined) => (n == null ? "" : String(n));
  return {
    sensorId: r.sensorId,
    siteId: r.siteId,
    projectId: r.projectId ?? "",
    airTempC: str(r.airTempC),
    pressureHpa: str(r.pressureHpa),
    humidityPct: str(r.humidityPct),
    note: r.note ?? "",
  };
}

export function sessionRecordOf(v: SessionValues): Omit<SyncSessionRecord, "id" | "startedAt"> {
  return {
    sensorId: v.sensorId,
    siteId: v.siteId,
    projectId: v.projectId || undefined,
    airTempC: parseNum(v.airTempC),
    pressureHpa: parseNum(v.pressureHpa),
    humidityPct: parseNum(v.humidityPct),
    note: v.note.trim() || undefined,
  };
}

/** An id the tablet's copy does not know stays choosable (and visibly so) rather than vanish. */
function withCurrent(options: { value: string; label: string }[], value: string) {
  return value && !options.some((o) => o.value === value) ? [{ value, label: `${value} (not on this tablet)` }, ...options] : options;
}

export function SessionFields({
  reference,
  values,
  onChange,
  errors,
  children,
}: {
  reference: ReferenceCopy;
  values: SessionValues;
  onChange: (key: keyof SessionValues, value: string) => void;
  errors: Record<string, string | undefined>;
  /** Rendered between the air and the note (the start screen's sky). */
  children?: ReactNode;
}) {
  const { sensorId, siteId } = values;
  const sensor = reference.sensors.find((s) => s.id === sensorId);
  const projects = useMemo(
    () => reference.projects.filter((p) => (!sensorId || p.sensorIds.length === 0 || p.sensorIds.includes(sensorId)) && (!siteId || p.siteIds.length === 0 || p.siteIds.includes(siteId))),
    [reference.projects, sensorId, siteId],
  );
  const missingAir = [
    values.airTempC.trim() === "" ? `air temperature ${AIR_DEFAULTS.airTempC} °C` : null,
    values.pressureHpa.trim() === "" ? `pressure ${AIR_DEFAULTS.pressureHpa} hPa` : null,
    values.humidityPct.trim() === "" ? `humidity ${AIR_DEFAULTS.humidityPct} %` : null,
  ].filter(Boolean);
  const set = (key: keyof SessionValues) => (v: string) => onChange(key, v);

  return (
    <>
      <div className="grid gap-4 sm:grid-cols-2">
        <SelectField
          id="sensorId"
          label="Sensor"
          value={sensorId}
          onChange={set("sensorId")}
          placeholder="— choose the sensor —"
          options={withCurrent(reference.sensors.map((s) => ({ value: s.id, label: `${s.label} (${s.serial})` })), sensorId)}
          error={errors.sensorId}
        />
        <SelectField
          id="siteId"
          label="Site"
          value={siteId}
          onChange={set("siteId")}
          placeholder="— choose the site —"
          options={withCurrent(reference.sites.map((s) => ({ value: s.id, label: `${s.name} (${s.targets.length} targets)` })), siteId)}
          error={errors.siteId}
        />
        <div className="sm:col-span-2">
          <SelectField
            id="projectId"
            label="Project"
            value={values.projectId}
            onChange={set("projectId")}
            placeholder="— none: the default acceptance rule —"
            options={withCurrent(projects.map((p) => ({ value: p.id, label: p.client ? `${p.name} (${p.client})` : p.name })), values.projectId)}
            optional
            error={errors.projectId}
          />
        </div>
      </div>
      {sensor ? (
        <p className="text-muted">
          {sensor.kind === "cw" ? "Continuous-wave (phase)" : "Pulsed"}, {sensor.wavelengthNm} nm, tolerance ±({sensor.toleranceMm} mm + {sensor.tolerancePpm} ppm)
          {sensor.calibrationDue ? `, calibration due ${sensor.calibrationDue}` : ""}.
        </p>
      ) : null}

      <fieldset className="space-y-3">
        <legend className="text-xl font-bold">Air</legend>
        <div className="grid gap-4 sm:grid-cols-3">
          <NumberField id="airTempC" label="Air temperature (°C)" unit="°C" value={values.airTempC} onChange={set("airTempC")} error={errors.airTempC} placeholder={String(AIR_DEFAULTS.airTempC)} />
          <NumberField id="pressureHpa" label="Pressure (hPa)" unit="hPa" value={values.pressureHpa} onChange={set("pressureHpa")} error={errors.pressureHpa} placeholder={String(AIR_DEFAULTS.pressureHpa)} />
          <NumberField id="humidityPct" label="Humidity (%)" unit="%" value={values.humidityPct} onChange={set("humidityPct")} error={errors.humidityPct} placeholder={String(AIR_DEFAULTS.humidityPct)} />
        </div>
        {missingAir.length ? (
          <p className="font-bold text-warn" data-testid="air-defaults">
            Not entered, so the standard value is used: {missingAir.join(", ")}. The report marks this session as using assumed air.
          </p>
        ) : null}
      </fieldset>

      {children}

      <div>
        <label htmlFor="note" className="field-label">
          Note <span className="font-normal text-muted">(optional)</span>
        </label>
        <textarea
          id="note"
          className="input"
          rows={2}
          value={values.note}
          onChange={(e) => onChange("note", e.target.value)}
          aria-invalid={errors.note ? true : undefined}
          aria-describedby={errors.note ? "note-error" : undefined}
        />
        {errors.note ? (
          <p id="note-error" className="field-error" role="alert">
            {errors.note}
          </p>
        ) : null}
      </div>
    </>
  );
}
