// The project form with its acceptance rule (ranging.md §6), shared by /admin/projects/new and
// /admin/projects/:projectId (not a route itself).
import { getFormProps, useForm, type SubmissionResult } from "@conform-to/react";
import { Form, useNavigation } from "react-router";
import { Checkbox, CheckboxGroup, Field, FormSummary, NumberField, RadioGroup, TextArea, countFieldErrors } from "~/components/forms";
import { DEFAULT_RULE, EDITION2_PRESET } from "~/domain";
import { parseRegistryForm, projectSchema, type ProjectInput } from "~/contract/registry";

export type ProjectChoices = {
  sensors: { id: string; label: string; serial: string; retiredAt: string | null }[];
  sites: { id: string; name: string; retiredAt: string | null }[];
  // issue 14: the tapes and reference EDMs its crews may use
  tapes: { id: string; label: string; certDue: string | null; retiredAt: string | null }[];
  edms: { id: string; label: string; serial: string; certDue: string | null; retiredAt: string | null }[];
};

export function projectDefaults(r?: {
  name: string;
  client: string;
  notes: string;
  minShots: number;
  coverageK: number;
  minWithinPct: number;
  rangeBandEdgesM: number[];
  sensorIds: string[];
  siteIds: string[];
  tapeIds?: string[];
  edmIds?: string[];
  referenceRatio?: number;
  referenceInVerdict?: boolean;
  statement?: "rmse" | "nssda95";
  edmUncertaintyMm?: number | null;
  edmUncertaintyPpm?: number | null;
}): Record<string, unknown> {
  const rule = r ?? DEFAULT_RULE;
  const s = (v: number | null | undefined) => (v == null ? "" : String(v));
  return {
    name: r?.name ?? "",
    client: r?.client ?? "",
    notes: r?.notes ?? "",
    minShots: String(rule.minShots),
    coverageK: String(rule.coverageK),
    minWithinPct: String(rule.minWithinPct),
    rangeBandEdgesM: rule.rangeBandEdgesM.join(", "),
    sensorIds: r?.sensorIds ?? [],
    siteIds: r?.siteIds ?? [],
    tapeIds: r?.tapeIds ?? [],
    edmIds: r?.edmIds ?? [],
    referenceRatio: s(rule.referenceRatio ?? 2),
    referenceInVerdict: rule.referenceInVerdict ? "on" : "",
    statement: rule.statement ?? "rmse",
    edmUncertaintyMm: s(rule.edmUncertaintyMm),
    edmUncertaintyPpm: s(rule.edmUncertaintyPpm),
  };
}

export function ProjectForm({
  lastResult,
  defaultValue,
  submitLabel,
  choices,
}: {
  lastResult: SubmissionResult<string[]> | null | undefined;
  defaultValue: Record<string, unknown>;
  submitLabel: string;
  choices: ProjectChoices;
}) {
  const navigation = useNavigation();
  const busy = navigation.state !== "idle" && navigation.formMethod === "POST";
  const [form, fields] = useForm<ProjectInput>({
    id: "project-form",
    lastResult,
    defaultValue: defaultValue as never,
    shouldValidate: "onSubmit",
    shouldRevalidate: "onInput",
    onValidate: ({ formData }) => parseRegistryForm(formData, projectSchema),
  });
  const retired = (x: { retiredAt: string | null }) => (x.retiredAt ? " (retired)" : "");
  return (
    <Form method="post" {...getFormProps(form)} className="space-y-6">
      <FormSummary errors={form.errors} fieldErrorCount={countFieldErrors(form.allErrors)} />
      <section className="card grid gap-4 sm:grid-cols-2">
        <h2 className="text-xl font-bold sm:col-span-2">Project</h2>
        <Field meta={fields.name} label="Name" hint="e.g. “River valley road corridor”." />
        <Field meta={fields.client} label="Client" hint="Optional; shown on the client's report." />
        <TextArea className="sm:col-span-2" meta={fields.notes} label="Notes" hint="The client's specification, contract clauses." />
      </section>

      <section className="card grid gap-4 sm:grid-cols-2">
        <h2 className="text-xl font-bold sm:col-span-2">Acceptance rule</h2>
        <p className="text-muted sm:col-span-2">
          Defaults: {DEFAULT_RULE.minShots} shots, k = {DEFAULT_RULE.coverageK}, {DEFAULT_RULE.minWithinPct} % within, bands {DEFAULT_RULE.rangeBandEdgesM.join(", ")} m. Changing the rule recomputes
          the shots of this project's sensors.
        </p>
        <NumberField meta={fields.minShots} label="Minimum number of shots" unit="shots" integer hint="Fewer gives “not enough shots”." />
        <NumberField meta={fields.coverageK} label="Coverage factor k" unit="× T" hint="Per-shot limit = k × the sensor's tolerance T." />
        <NumberField meta={fields.minWithinPct} label="Minimum share within the limit" unit="%" />
        <NumberField
          meta={fields.rangeBandEdgesM}
          allErrors
          label="Range band edges"
          unit="m"
          hint="Lower edges, from 0 and rising, separated by commas: 0, 10, 30, 100 makes 0–10, 10–30, 30–100 and 100+ m."
        />
      </section>

      <section className="card grid gap-4 sm:grid-cols-2" data-testid="reference-rule">
        <h2 className="text-xl font-bold sm:col-span-2">Reference uncertainty and accuracy statement</h2>
        <div className="sm:col-span-2">
          <button
            type="button"
            className="btn-secondary"
            data-testid="preset-edition2"
            onClick={() => {
              form.update({ name: fields.minShots.name, value: String(EDITION2_PRESET.minShots) });
              form.update({ name: fields.referenceInVerdict.name, value: "on" });
              form.update({ name: fields.statement.name, value: EDITION2_PRESET.statement });
              form.update({ name: fields.referenceRatio.name, value: String(EDITION2_PRESET.referenceRatio) });
            }}
          >
            Apply preset “ASPRS Edition 2”
          </button>
          <p className="mt-1 text-sm text-muted">
            ASPRS Positional Accuracy Standards, Edition 2 (2023): at least {EDITION2_PRESET.minShots} check-shots, RMSE-only statement, the reference's accuracy in the verdict.
          </p>
        </div>
        <RadioGroup
          className="sm:col-span-2"
          meta={fields.statement}
          label="What the report leads with"
          options={[
            { value: "rmse", label: "RMSE (ASPRS Edition 2)", hint: "RMSE with the reference included when its uncertainty is known; no 95 % figure." },
            { value: "nssda95", label: "95 % accuracy (NSSDA)", hint: "1.96 × RMSE, FGDC-STD-007.3-1998." },
          ]}
        />
        <NumberField
          meta={fields.referenceRatio}
          label="Reference ratio r"
          unit="×"
          hint="The reference must be r times as accurate as the tolerance: 2 is Edition 2 practice, 4 follows ASTM E3125-17."
        />
        <Checkbox meta={fields.referenceInVerdict} label="The reference test enters the verdict" hint="Then a failed or unknown reference test holds a pass back (verdict “insufficient”)." />
        <NumberField meta={fields.edmUncertaintyMm} label="EDM uncertainty, constant part" unit="mm" hint="For EDM shots that name no reference EDM; empty = unknown." />
        <NumberField meta={fields.edmUncertaintyPpm} label="EDM uncertainty, distance part" unit="ppm" />
      </section>

      <section className="card grid gap-4">
        <h2 className="text-xl font-bold">Sensors and sites</h2>
        <CheckboxGroup
          meta={fields.sensorIds}
          label="Sensors verified for this project"
          options={choices.sensors.map((s) => ({ value: s.id, label: `${s.label} — ${s.serial}${retired(s)}` }))}
          empty="No sensors registered yet."
        />
        <CheckboxGroup meta={fields.siteIds} label="Sites used" options={choices.sites.map((s) => ({ value: s.id, label: `${s.name}${retired(s)}` }))} empty="No sites registered yet." />
      </section>

      {/* issue 14: only these travel to the project's tablets and may be named on its shots */}
      <section className="card grid gap-4" id="tapes-edms" data-testid="project-tapes-edms">
        <h2 className="text-xl font-bold">Tapes and reference EDMs</h2>
        <p className="text-muted">
          The project's crews see only the tapes and reference EDMs ticked here, and a shot naming another one is refused at sync. Shots already taken keep the tape or EDM they name.
        </p>
        <CheckboxGroup
          meta={fields.tapeIds}
          label="Tapes the crews may use"
          options={choices.tapes.map((t) => ({ value: t.id, label: `${t.label}${t.certDue ? ` — certificate due ${t.certDue}` : ""}${retired(t)}` }))}
          empty="No tapes registered yet."
        />
        <CheckboxGroup
          meta={fields.edmIds}
          label="Reference EDMs the crews may use"
          options={choices.edms.map((e) => ({ value: e.id, label: `${e.label} — ${e.serial}${e.certDue ? `, certificate due ${e.certDue}` : ""}${retired(e)}` }))}
          empty="No reference EDMs registered yet."
        />
      </section>

      <button type="submit" className="btn" disabled={busy}>
        {busy ? "Saving…" : submitLabel}
      </button>
    </Form>
  );
}
