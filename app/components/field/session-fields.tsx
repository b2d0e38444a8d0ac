// A session's own fields (sensor, site, project, air, note), shared by the start screen and
// the fix screen of a refused session. Ids are the record's paths, so the server's messages
// land on the field they name.
import { useEffect, useMemo, type ReactNode } from "react";
import { AIR_DEFAULTS } from "~/domain";
import type { ReferenceCopy } from "~/offline/reference";
import type { RefProject, SyncSessionRecord } from "~/offline/types";
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

/**
 * The projects a session of this sensor at this site may belong to (api.md v1.1): those of the
 * tablet's copy (only the crew's own projects) that hold both. One is implied; several are a
 * choice; none means the session cannot start, as the server would refuse it with path projectId.
 */
export function sharedProjects(projects: RefProject[], sensorId: string, siteId: string): RefProject[] {
  if (!sensorId || !siteId) return [];
  return projects.filter((p) => p.sensorIds.includes(sensorId) && p.siteIds.includes(siteId));
}

/** The message for the project of a session, or null when it is fine to start. */
export function projectProblem(projects: RefProject[], values: Pick<SessionValues, "sensorId" | "siteId" | "projectId">): string | null {
  if (!values.sensorId || !values.siteId) return null;
  const shared = sharedProjects(projects, values.sensorId, values.siteId);
  if (shared.length === 0) return NO_SHARED_PROJECT;
  if (shared.length > 1 && !shared.some((p) => p.id === values.projectId)) return "Choose the project this session belongs to";
  return null;
}

export const NO_SHARED_PROJECT =
  "None of your projects holds both this sensor and this site, so a session cannot start here. Pick another sensor or site, or ask an admin to add them to your project.";

const projectLabel = (p: RefProject) => (p.client ? `${p.name} (${p.client})` : p.name);

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
  const projects = useMemo(() => sharedProjects(reference.projects, sensorId, siteId), [reference.projects, sensorId, siteId]);
  const chosen = Boolean(sensorId && siteId);
  // One shared project is implied; a choice that no longer fits the sensor and site is cleared.
  const implied = projects.length === 1 ? projects[0]!.id : null;
  useEffect(() => {
    if (!chosen) return;
    if (implied && values.projectId !== implied) onChange("projectId", implied);
    else if (!implied && values.projectId && !projects.some((p) => p.id === values.projectId)) onChange("projectId", "");
    // eslint-disable-next-line react-hooks/exhaustive-deps
  }, [chosen, implied, projects, values.projectId]);
  const missingAir = [
    values.airTempC.trim() === "" ? `air temperature ${AIR_DEFAULTS.airTempC} °C` : null,
    values.pressureHpa.trim() === "" ? `pressure ${AIR_DEFAULTS.pressureHpa} hPa` : null,
    values.humidityPct.trim() === "" ? `humidity ${AIR_DEFAULTS.humidityPct} %` : null,
  ].filter(Boolean);
  const set = (key: keyof SessionValues) => (v: string) => {
    onChange(key, v);
    // Another sensor or site: the project is chosen again (an implied one must not stay as a silent choice).
    if ((key === "sensorId" || key === "siteId") && values.projectId) onChange("projectId", "");
  };

  return (
    <>
      <div className="grid gap-4 sm:grid-cols-2">
        <SelectField
          id="sensorId"
          label="Sensor"
          value={sensorId}
          onChange={set("sensorId")}
          placeholder="— choose the sensor —"
          options={withCurrent(
            reference.sensors.map((s) => ({ value: s.id, label: `${s.label} (${s.serial})` })),
            sensorId,
          )}
          error={errors.sensorId}
        />
        <SelectField
          id="siteId"
          label="Site"
          value={siteId}
          onChange={set("siteId")}
          placeholder="— choose the site —"
          options={withCurrent(
            reference.sites.map((s) => ({ value: s.id, label: `${s.name} (${s.targets.length} targets)` })),
            siteId,
          )}
          error={errors.siteId}
        />
        <div className="sm:col-span-2" data-testid="session-project">
          {!chosen ? (
            <p>
              <span className="field-label">Project</span>
              <span className="text-muted">Choose the sensor and the site first: the project follows from them.</span>
            </p>
          ) : projects.length === 0 ? (
            <div>
              <span className="field-label">Project</span>
              <p id="projectId" tabIndex={-1} className="rounded-md border-2 border-warn p-3 font-bold" role="alert" data-testid="no-shared-project">
                <span aria-hidden="true">⚠ </span>
                {NO_SHARED_PROJECT}
              </p>
            </div>
          ) : projects.length === 1 ? (
            <div>
              <span className="field-label" id="projectId-label">
                Project
              </span>
              <p id="projectId" tabIndex={-1} aria-labelledby="projectId-label projectId" className="text-lg font-bold" data-testid="implied-project">
                {projectLabel(projects[0]!)}
                <span className="font-normal text-muted"> — the only project of yours with this sensor and this site</span>
              </p>
              {errors.projectId ? (
                <p id="projectId-error" className="field-error" role="alert">
                  {errors.projectId}
                </p>
              ) : null}
            </div>
          ) : (
            <SelectField
              id="projectId"
              label="Project"
              value={values.projectId}
              onChange={set("projectId")}
              placeholder="— choose the project: this sensor and site are in several —"
              options={withCurrent(
                projects.map((p) => ({ value: p.id, label: projectLabel(p) })),
                values.projectId,
              )}
              error={errors.projectId}
            />
          )}
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
          <NumberField
            id="pressureHpa"
            label="Pressure (hPa)"
            unit="hPa"
            value={values.pressureHpa}
            onChange={set("pressureHpa")}
            error={errors.pressureHpa}
            placeholder={String(AIR_DEFAULTS.pressureHpa)}
          />
          <NumberField
            id="humidityPct"
            label="Humidity (%)"
            unit="%"
            value={values.humidityPct}
            onChange={set("humidityPct")}
            error={errors.humidityPct}
            placeholder={String(AIR_DEFAULTS.humidityPct)}
          />
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
