// The sensor form, shared by /admin/sensors/new and /admin/sensors/:sensorId (not a route itself).
import { getFormProps, useForm, type FieldMetadata, type SubmissionResult } from "@conform-to/react";
import { Form, useNavigation } from "react-router";
import { CertificateFields, certificateDefaults } from "~/components/certificate";
import { Field, FormSummary, NumberField, RadioGroup, Select, TextArea, countFieldErrors } from "~/components/forms";
import { formatTolerance, LASER_CLASS_OPTIONS, parseRegistryForm, sensorSchema, SENSOR_KIND_LABEL, type SensorInput } from "~/contract/registry";

export type SensorFormDefaults = Record<string, unknown>;

/** Form defaults from a stored sensor (booleans as the radios' "true"/"false"). */
export function sensorDefaults(r?: {
  label: string;
  serial: string;
  kind: string;
  wavelengthNm: number;
  modulationHz: number[];
  appliesAirCorrection: boolean;
  assumedRefractivity: number;
  toleranceMm: number;
  tolerancePpm: number;
  outdoor: boolean;
  calibrationDue: string | null;
  notes: string;
  laserClass?: string | null;
  certNumber?: string | null;
  certLaboratory?: string | null;
  certIssued?: string | null;
  certDue?: string | null;
  intrinsics?: { fx: number; fy: number; cx: number; cy: number } | null;
  depthScaleMm?: number | null;
}): SensorFormDefaults {
  if (!r) return { kind: "pulsed", modulationHz: [], outdoor: "true", assumedRefractivity: "0", laserClass: "", certificate: certificateDefaults() };
  return {
    label: r.label,
    serial: r.serial,
    kind: r.kind,
    wavelengthNm: String(r.wavelengthNm),
    modulationHz: r.modulationHz.map(String),
    appliesAirCorrection: String(r.appliesAirCorrection),
    assumedRefractivity: String(r.assumedRefractivity),
    toleranceMm: String(r.toleranceMm),
    tolerancePpm: String(r.tolerancePpm),
    outdoor: String(r.outdoor),
    calibrationDue: r.calibrationDue ?? "",
    notes: r.notes,
    laserClass: r.laserClass ?? "",
    certificate: certificateDefaults(r),
    // issue 18
    intrinsics: r.intrinsics ? { fx: String(r.intrinsics.fx), fy: String(r.intrinsics.fy), cx: String(r.intrinsics.cx), cy: String(r.intrinsics.cy) } : {},
    depthScaleMm: r.depthScaleMm == null ? "" : String(r.depthScaleMm),
  };
}

function mhz(v: unknown) {
  const n = typeof v === "string" && v.trim() !== "" ? Number(v) : NaN;
  return Number.isFinite(n) && n > 0 ? `= ${(n / 1e6).toLocaleString("en-GB", { maximumFractionDigits: 6 })} MHz` : null;
}

export function SensorForm({ lastResult, defaultValue, submitLabel }: { lastResult: SubmissionResult<string[]> | null | undefined; defaultValue: SensorFormDefaults; submitLabel: string }) {
  const navigation = useNavigation();
  const busy = navigation.state !== "idle" && navigation.formMethod === "POST";
  const [form, fields] = useForm<SensorInput>({
    id: "sensor-form",
    lastResult,
    defaultValue: defaultValue as never,
    shouldValidate: "onSubmit",
    shouldRevalidate: "onInput",
    onValidate: ({ formData }) => parseRegistryForm(formData, sensorSchema),
  });
  const mods = fields.modulationHz.getFieldList();
  // intrinsics is preprocessed (all-empty → absent), so its input type is unknown to Conform
  const intr = (fields.intrinsics as unknown as FieldMetadata<{ fx: number; fy: number; cx: number; cy: number } | undefined, SensorInput, string[]>).getFieldset();
  const a = Number(fields.toleranceMm.value);
  const b = Number(fields.tolerancePpm.value);
  const tolOk = fields.toleranceMm.value !== undefined && fields.tolerancePpm.value !== undefined && Number.isFinite(a) && Number.isFinite(b);

  return (
    <Form method="post" {...getFormProps(form)} className="space-y-6">
      <FormSummary errors={form.errors} fieldErrorCount={countFieldErrors(form.allErrors)} />

      <section className="card grid gap-4 sm:grid-cols-2">
        <h2 className="text-xl font-bold sm:col-span-2">Identity</h2>
        <Field meta={fields.label} label="Label" hint="What the crew sees, e.g. “Roof scanner”." />
        <Field meta={fields.serial} label="Serial number" hint="As printed on the sensor." />
        <RadioGroup
          className="sm:col-span-2"
          meta={fields.kind}
          label="Kind"
          options={[
            { value: "pulsed", label: SENSOR_KIND_LABEL.pulsed, hint: "Times each pulse's round trip." },
            { value: "cw", label: SENSOR_KIND_LABEL.cw, hint: "Measures the phase of modulated light." },
          ]}
        />
        <NumberField meta={fields.wavelengthNm} label="Laser wavelength" unit="nm" hint="300 to 2000 nm, e.g. 905 or 1550." />
      </section>

      <section className="card space-y-3">
        <h2 className="text-xl font-bold">Modulation frequencies</h2>
        <p className="text-muted">A continuous-wave sensor needs at least one; a pulsed sensor needs none.</p>
        {mods.length === 0 ? <p>None given.</p> : null}
        <ul className="space-y-3">
          {mods.map((m, i) => (
            <li key={m.key} className="flex flex-wrap items-end gap-3">
              <NumberField className="w-72" meta={m} label={`Frequency ${i + 1}`} unit="Hz" hint={mhz(m.value) ?? "In hertz, e.g. 20000000 for 20 MHz."} />
              <button className="btn-secondary" {...form.remove.getButtonProps({ name: fields.modulationHz.name, index: i })}>
                Remove frequency {i + 1}
              </button>
            </li>
          ))}
        </ul>
        <button className="btn-secondary" {...form.insert.getButtonProps({ name: fields.modulationHz.name })}>
          + Add a modulation frequency
        </button>
        {(() => {
          const e = fields.modulationHz.errors ?? [];
          return e.length ? (
            <div id={fields.modulationHz.errorId} className="field-error" role="alert">
              {e.map((x) => (
                <p key={x}>⚠ {x}</p>
              ))}
            </div>
          ) : null;
        })()}
      </section>

      <section className="card grid gap-4 sm:grid-cols-2">
        <h2 className="text-xl font-bold sm:col-span-2">Air</h2>
        <RadioGroup
          className="sm:col-span-2"
          meta={fields.appliesAirCorrection}
          label="Does the sensor correct its ranges for air itself?"
          options={[
            { value: "true", label: "Yes, it applies its own air correction" },
            { value: "false", label: "No, it assumes a fixed refractivity" },
          ]}
        />
        <NumberField meta={fields.assumedRefractivity} label="Refractivity it assumes" unit="ppm" hint="N = (n − 1)·10⁶; 0 means the vacuum speed of light. Used when it does not correct for air." />
      </section>

      <section className="card grid gap-4 sm:grid-cols-2">
        <h2 className="text-xl font-bold sm:col-span-2">Tolerance ±(a + b × distance)</h2>
        <NumberField meta={fields.toleranceMm} label="a, constant part" unit="mm" hint="The same at every distance." />
        <NumberField meta={fields.tolerancePpm} label="b, part per distance" unit="ppm" hint="1 ppm = 1 mm per km." />
        <p className="num text-lg sm:col-span-2" aria-live="polite">
          {tolOk ? (
            <>
              Tolerance <strong>{formatTolerance(a, b)}</strong>: ±{(a + (b * 50) / 1000).toFixed(2)} mm at 50 m, ±{(a + (b * 100) / 1000).toFixed(2)} mm at 100 m.
            </>
          ) : (
            "Give both parts to see the tolerance at 50 m and 100 m."
          )}
        </p>
      </section>

      <section className="card grid gap-4 sm:grid-cols-2">
        <h2 className="text-xl font-bold sm:col-span-2">Use and calibration</h2>
        <RadioGroup
          className="sm:col-span-2"
          meta={fields.outdoor}
          label="Where is it used?"
          hint="Outdoor sensors need a session in bright sun (50 klux or more) on the coverage checklist."
          options={[
            { value: "true", label: "Outdoors" },
            { value: "false", label: "Indoors only" },
          ]}
        />
        <Field meta={fields.calibrationDue} type="date" label="Calibration due" hint="Leave empty when unknown." />
        <Select
          meta={fields.laserClass}
          label="Laser class (IEC 60825-1)"
          hint="From the label on the instrument; shown with the cautions on the field session screen and the print."
          placeholder="Not known"
          options={LASER_CLASS_OPTIONS.map((c) => ({ value: c, label: `Class ${c}` }))}
        />
        <CertificateFields meta={fields.certificate} />
        <TextArea className="sm:col-span-2" meta={fields.notes} label="Notes" />
      </section>

      {/* issue 18: depth cameras (ranging.md §8) */}
      <section className="card grid gap-4 sm:grid-cols-2">
        <h2 className="text-xl font-bold sm:col-span-2">Depth camera (time-of-flight frames)</h2>
        <p className="text-muted sm:col-span-2">
          Only for cameras whose depth frames are checked: the pinhole intrinsics from the maker's calibration (pixel centres at whole-number coordinates) and the depth per unit of its 16-bit frames.
          Leave all empty for other sensors.
        </p>
        <NumberField meta={intr.fx} label="Focal length fx" unit="px" />
        <NumberField meta={intr.fy} label="Focal length fy" unit="px" />
        <NumberField meta={intr.cx} label="Principal point cx" unit="px" />
        <NumberField meta={intr.cy} label="Principal point cy" unit="px" />
        <NumberField meta={fields.depthScaleMm} label="Depth scale" unit="mm per unit" hint="E.g. 1 when the frame stores millimetres, 0.25 for quarter millimetres." />
        {fields.intrinsics.errors?.length ? (
          <div id={fields.intrinsics.errorId} className="field-error sm:col-span-2" role="alert">
            {fields.intrinsics.errors.map((x) => (
              <p key={x}>⚠ {x}</p>
            ))}
          </div>
        ) : null}
      </section>

      <div className="flex flex-wrap gap-3">
        <button type="submit" className="btn" disabled={busy}>
          {busy ? "Saving…" : submitLabel}
        </button>
      </div>
    </Form>
  );
}
