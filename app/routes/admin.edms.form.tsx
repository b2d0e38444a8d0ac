// The reference-EDM form (issue 15), shared by /admin/edms/new and /admin/edms/:edmId (not a route itself).
import { getFormProps, useForm, type SubmissionResult } from "@conform-to/react";
import { Form, useNavigation } from "react-router";
import { CertificateFields, certificateDefaults } from "~/components/certificate";
import { Field, FormSummary, NumberField, TextArea, countFieldErrors } from "~/components/forms";
import { edmSchema, parseRegistryForm, type EdmInput } from "~/contract/registry";

export function edmDefaults(r?: {
  label: string;
  serial: string;
  uncertaintyMm: number;
  uncertaintyPpm: number;
  notes: string;
  certNumber: string | null;
  certLaboratory: string | null;
  certIssued: string | null;
  certDue: string | null;
}): Record<string, unknown> {
  if (!r) return { uncertaintyPpm: "0", certificate: certificateDefaults() };
  return {
    label: r.label,
    serial: r.serial,
    uncertaintyMm: String(r.uncertaintyMm),
    uncertaintyPpm: String(r.uncertaintyPpm),
    notes: r.notes,
    certificate: certificateDefaults(r),
  };
}

export function EdmForm({ lastResult, defaultValue, submitLabel }: { lastResult: SubmissionResult<string[]> | null | undefined; defaultValue: Record<string, unknown>; submitLabel: string }) {
  const navigation = useNavigation();
  const busy = navigation.state !== "idle" && navigation.formMethod === "POST";
  const [form, fields] = useForm<EdmInput>({
    id: "edm-form",
    lastResult,
    defaultValue: defaultValue as never,
    shouldValidate: "onSubmit",
    shouldRevalidate: "onInput",
    onValidate: ({ formData }) => parseRegistryForm(formData, edmSchema),
  });
  return (
    <Form method="post" {...getFormProps(form)} className="space-y-6">
      <FormSummary errors={form.errors} fieldErrorCount={countFieldErrors(form.allErrors)} />
      <section className="card grid gap-4 sm:grid-cols-2">
        <h2 className="text-xl font-bold sm:col-span-2">Reference EDM</h2>
        <Field meta={fields.label} label="Label" hint="e.g. “Total station TS-2”." />
        <Field meta={fields.serial} label="Serial number" />
        <NumberField meta={fields.uncertaintyMm} label="Standard uncertainty, constant part" unit="mm" hint="k = 1, from the certificate (a in a + b·D)." />
        <NumberField meta={fields.uncertaintyPpm} label="Standard uncertainty, distance part" unit="ppm" hint="b in a + b·D; 1 ppm = 1 mm per km." />
        <CertificateFields meta={fields.certificate} />
        <TextArea className="sm:col-span-2" meta={fields.notes} label="Notes" />
      </section>
      <button type="submit" className="btn" disabled={busy}>
        {busy ? "Saving…" : submitLabel}
      </button>
    </Form>
  );
}
