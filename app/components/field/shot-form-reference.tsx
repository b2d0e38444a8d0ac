// The log-shot form's first card: the target and how its reference distance was measured (tape
// with its corrections, EDM, or the surveyed coordinates with the computed distance beside the
// surveyed one). Issue 13: split out of shot-form.tsx.
import type { PreviewContext } from "~/offline/preview";
import { signedMm } from "./feedback";
import { Choice, NumberField, SelectField, fmt } from "./inputs";
import type { SetField, ShotFormState } from "./shot-form-state";

/** The computed distance beside the surveyed one, and what the typed heights do to it. */
export type CoordinatesCheck = { computedM: number; surveyedM: number | null; heightsMm: number | null; limitMm: number } | null;

export function ReferenceCard({
  f,
  set,
  errors,
  ctx,
  coordinates,
  pickTarget,
  pickTape,
}: {
  f: ShotFormState;
  set: SetField;
  errors: Record<string, string>;
  ctx: PreviewContext;
  coordinates: CoordinatesCheck;
  pickTarget: (id: string) => void;
  pickTape: (id: string) => void;
}) {
  const site = ctx.site;
  const targetOptions = (site?.targets ?? []).map((t) => ({
    value: t.id,
    label: `${t.label} — ${fmt(t.reflectancePct, 0)} %${t.retro ? " retro" : ""}${t.referenceM != null ? `, ${fmt(t.referenceM, 3)} m` : ""}`,
  }));
  return (
    <section className="card order-1 space-y-4">
      <h2 className="text-xl font-bold">Target and reference distance</h2>
      <SelectField
        id="f-target"
        label="Target"
        value={f.targetId}
        onChange={pickTarget}
        options={targetOptions}
        placeholder="— no target from the site —"
        error={errors["targetId"]}
        optional={f.method !== "coordinates"}
      />
      <Choice
        name="f-method"
        legend="How the reference distance was measured"
        value={f.method}
        onChange={(v) => set("method", v)}
        error={errors["reference.method"]}
        options={[
          { value: "tape", label: "Steel tape" },
          { value: "edm", label: "EDM" },
          { value: "coordinates", label: "Coordinates" },
        ]}
      />
      {f.method !== "coordinates" ? (
        <NumberField
          id="f-distance"
          label="Reference distance (m)"
          unit="m"
          value={f.distanceM}
          required
          onChange={(v) => set("distanceM", v)}
          error={errors["reference.distanceM"]}
          hint={f.method === "tape" ? "As read on the tape; the corrections below are applied to it." : undefined}
        />
      ) : null}
      {f.method === "tape" ? (
        <div className="grid gap-4 sm:grid-cols-2">
          <SelectField
            id="f-tape"
            label="Tape"
            value={f.tapeId}
            onChange={pickTape}
            options={ctx.tapes.map((t) => ({ value: t.id, label: t.label }))}
            placeholder={ctx.tapes.length ? undefined : "— no tapes on this tablet —"}
            error={errors["reference.tape.tapeId"]}
          />
          <NumberField id="f-tapeTemp" label="Tape temperature (°C)" unit="°C" value={f.tapeTempC} required onChange={(v) => set("tapeTempC", v)} error={errors["reference.tape.tempC"]} />
          <NumberField id="f-tension" label="Pull (N)" unit="N" value={f.tensionN} required onChange={(v) => set("tensionN", v)} error={errors["reference.tape.tensionN"]} />
          <NumberField id="f-spans" label="Spans" unit="spans" inputMode="numeric" value={f.spans} required onChange={(v) => set("spans", v)} error={errors["reference.tape.spans"]} />
          <div className="sm:col-span-2">
            <Choice
              name="f-support"
              legend="Tape support"
              value={f.support}
              onChange={(v) => set("support", v)}
              error={errors["reference.tape.support"]}
              options={[
                { value: "ground", label: "Lying on the ground" },
                { value: "ends", label: "Held at the ends (sag)" },
              ]}
            />
          </div>
        </div>
      ) : null}
      {f.method === "coordinates" ? (
        <div className="grid gap-4 sm:grid-cols-3">
          <SelectField
            id="f-station"
            label="Station (sensor stands on)"
            value={f.stationId}
            onChange={(v) => set("stationId", v)}
            options={(site?.stations ?? []).map((st) => ({ value: st.id, label: st.label }))}
            placeholder={site?.stations.length ? undefined : "— no stations at this site —"}
            error={errors["reference.stationId"]}
          />
          <NumberField
            id="f-ih"
            label="Instrument height (m)"
            unit="m"
            value={f.instrumentHeightM}
            required
            onChange={(v) => set("instrumentHeightM", v)}
            error={errors["reference.instrumentHeightM"]}
          />
          <NumberField id="f-th" label="Target height (m)" unit="m" value={f.targetHeightM} required onChange={(v) => set("targetHeightM", v)} error={errors["reference.targetHeightM"]} />
          <p className="text-muted sm:col-span-3">
            The distance comes from the surveyed positions of the station and the target. The registry does not record whether a target's surveyed height is its board centre: if it is, the target
            height here is 0.
          </p>
          {coordinates ? (
            <div className="num space-y-1 sm:col-span-3" data-testid="coordinates-check">
              <p>
                Computed from the coordinates: <strong>{fmt(coordinates.computedM, 4)} m</strong>
                {coordinates.surveyedM != null ? (
                  <>
                    {" "}
                    · surveyed station-to-target distance in the registry: <strong>{fmt(coordinates.surveyedM, 4)} m</strong> (difference{" "}
                    {signedMm((coordinates.computedM - coordinates.surveyedM) * 1000)})
                  </>
                ) : (
                  " · the registry has no surveyed distance for this target"
                )}
              </p>
              {coordinates.heightsMm != null && Math.abs(coordinates.heightsMm) > coordinates.limitMm ? (
                <p className="flex items-center gap-2 font-bold text-warn" role="alert" data-testid="heights-warning">
                  The heights typed change the distance by {signedMm(coordinates.heightsMm)}, more than the ±{fmt(coordinates.limitMm, 1)} mm limit: check they are measured from the same points as the
                  site's survey.
                </p>
              ) : null}
            </div>
          ) : null}
        </div>
      ) : null}
      {f.method === "edm" ? (
        <SelectField
          id="f-edm"
          label="Reference EDM"
          value={f.edmId}
          onChange={(v) => set("edmId", v)}
          options={(ctx.edms ?? []).map((e) => ({ value: e.id, label: `${e.label} (${e.serial}) — ${e.uncertaintyMm} mm + ${e.uncertaintyPpm} ppm` }))}
          placeholder="— not listed: the project's EDM figure —"
          error={errors["reference.edmId"]}
          optional
        />
      ) : null}
      <NumberField
        id="f-ref-u"
        label="Reference uncertainty (mm)"
        unit="mm"
        value={f.refUncertaintyMm}
        onChange={(v) => set("refUncertaintyMm", v)}
        error={errors["reference.uncertaintyMm"]}
        hint="Standard uncertainty (k = 1) of this reference distance, when known; empty takes it from the tape's certificate, the surveyed points or the EDM."
      />
    </section>
  );
}
