// The tape form, shared by /admin/tapes/new and /admin/tapes/:tapeId (not a route itself).
import { getFormProps, useForm, type SubmissionResult } from "@conform-to/react";
import { Form, useNavigation } from "react-router";
import { CertificateFields, certificateDefaults } from "~/components/certificate";
import { Field, FormSummary, NumberField, TextArea, countFieldErrors } from "~/components/forms";
import { parseRegistryForm, tapeSchema, type TapeInput } from "~/contract/registry";

export function tapeDefaults(r?: {
  label: string;
  standardTempC: number;
  standardTensionN: number;
  areaMm2: number;
  modulusGPa: number;
  weightNPerM: number;
  calibrationPpm: number;
  notes: string;
  uncertaintyMm?: number | null;
  uncertaintyPpm?: number | null;
  certNumber?: string | null;
  certLaboratory?: string | null;
  certIssued?: string | null;
  certDue?: string | null;
}): Record<string, unknown> {
  // A new steel tape starts from the usual standard temperature and modulus; the rest is on its certificate.
  if (!r) return { standardTempC: "20", modulusGPa: "200", calibrationPpm: "0", certificate: certificateDefaults() };
  return {
    label: r.label,
    standardTempC: String(r.standardTempC),
    standardTensionN: String(r.standardTensionN),
    areaMm2: String(r.areaMm2),
    modulusGPa: String(r.modulusGPa),
    weightNPerM: String(r.weightNPerM),
    calibrationPpm: String(r.calibrationPpm),
    notes: r.notes,
    uncertaintyMm: r.uncertaintyMm == null ? "" : String(r.uncertaintyMm),
    uncertaintyPpm: r.uncertaintyPpm == null ? "" : String(r.uncertaintyPpm),
    certificate: certificateDefaults(r),
  };
}

export function TapeForm({ lastResult, defaultValue, submitLabel }: { lastResult: SubmissionResult<string[]> | null | undefined; defaultValue: Record<string, unknown>; submitLabel: string }) {
  const navigation = useNavigation();
  const busy = navigation.state !== "idle" && navigation.formMethod === "POST";
  const [form, fields] = useForm<TapeInput>({
    id: "tape-form",
    lastResult,
    defaultValue: defaultValue as never,
    shouldValidate: "onSubmit",
    shouldRevalidate: "onInput",
    onValidate: ({ formData }) => parseRegistryForm(formData, tapeSchema),
  });
  return (
    <Form method="post" {...getFormProps(form)} className="space-y-6">
      <FormSummary errors={form.errors} fieldErrorCount={countFieldErrors(form.allErrors)} />
      <section className="card grid gap-4 sm:grid-cols-2">
        <h2 className="text-xl font-bold sm:col-span-2">Tape</h2>
        <Field className="sm:col-span-2" meta={fields.label} label="Label" hint="As written on the reel, e.g. “Steel 50 m, reel B”." />
        <NumberField meta={fields.standardTempC} label="Standard temperature" unit="°C" hint="The temperature of the certificate, usually 20 °C." />
        <NumberField meta={fields.standardTensionN} label="Standard tension" unit="N" hint="The pull of the certificate, e.g. 50 N." />
        <NumberField meta={fields.areaMm2} label="Cross-section" unit="mm²" hint="Width × thickness of the band." />
        <NumberField meta={fields.modulusGPa} label="Modulus of elasticity" unit="GPa" hint="About 200 GPa for steel." />
        <NumberField meta={fields.weightNPerM} label="Weight per metre" unit="N/m" hint="For the sag correction when held at its ends." />
        <NumberField meta={fields.calibrationPpm} label="Certificate correction" unit="ppm" hint="Positive when the tape is longer than its nominal length (1 ppm = 1 mm per km)." />
        <NumberField
          meta={fields.uncertaintyMm}
          label="Certificate uncertainty, constant part"
          unit="mm"
          hint="Standard uncertainty (k = 1) a in a + b·L. Empty with the ppm part too: the reference uncertainty of taped shots is unknown."
        />
        <NumberField meta={fields.uncertaintyPpm} label="Certificate uncertainty, length part" unit="ppm" hint="b in a + b·L (1 ppm = 1 mm per km)." />
        <CertificateFields meta={fields.certificate} />
        <TextArea className="sm:col-span-2" meta={fields.notes} label="Notes" />
      </section>
      <button type="submit" className="btn" disabled={busy}>
        {busy ? "Saving…" : submitLabel}
      </button>
    </Form>
  );
}
