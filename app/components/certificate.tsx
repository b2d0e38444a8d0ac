// issue 15: calibration certificates (ranging.md §7 traceability) — the four form boxes shared
// by the sensor, tape and reference-EDM forms, and the one-line display of a certificate.
import type { FieldMetadata } from "@conform-to/react";
import { Field } from "~/components/forms";

// eslint-disable-next-line @typescript-eslint/no-explicit-any
type Meta = FieldMetadata<any, any, any>;
// eslint-disable-next-line @typescript-eslint/no-explicit-any
type ObjMeta = FieldMetadata<Record<string, unknown> | null | undefined, any, any>;

export type CertificateShape = { number: string | null; laboratory: string | null; issued: string | null; due: string | null };

/** The form boxes of `certificate.*`; all four empty means no certificate. */
export function CertificateFields({ meta }: { meta: unknown }) {
  const f = (meta as ObjMeta).getFieldset() as unknown as Record<"number" | "laboratory" | "issued" | "due", Meta>;
  return (
    <fieldset className="grid gap-4 sm:col-span-2 sm:grid-cols-2" data-testid="certificate-fields">
      <legend className="mb-2 text-lg font-bold">Calibration certificate</legend>
      <p className="text-sm text-muted sm:col-span-2">Makes a check traceable. Leave all four empty when there is none; a session after the due date is flagged on the tablet and the report.</p>
      <Field meta={f.number} label="Certificate number" />
      <Field meta={f.laboratory} label="Calibration laboratory" />
      <Field meta={f.issued} type="date" label="Issued" />
      <Field meta={f.due} type="date" label="Due" />
    </fieldset>
  );
}

/** Form defaults of the four boxes from a row's certificate columns. */
export function certificateDefaults(r?: { certNumber?: string | null; certLaboratory?: string | null; certIssued?: string | null; certDue?: string | null } | null) {
  return {
    number: r?.certNumber ?? "",
    laboratory: r?.certLaboratory ?? "",
    issued: r?.certIssued ?? "",
    due: r?.certDue ?? "",
  };
}

/** "No. 4711, Lab, issued …, due …" or "none". */
export function certificateText(c: CertificateShape | null | undefined): string {
  if (!c || (!c.number && !c.due)) return "none";
  return [c.number ? `No. ${c.number}` : null, c.laboratory, c.issued ? `issued ${c.issued}` : null, c.due ? `due ${c.due}` : null].filter(Boolean).join(", ");
}
