// The sign-off form of the QA sensor page (Conform + zod; a 400 keeps what was typed).
import { Form, useNavigation } from "react-router";
import { getFormProps, getInputProps, getSelectProps, getTextareaProps, useForm, type SubmissionResult } from "@conform-to/react";
import { parseWithZod } from "@conform-to/zod/v4";
import { signOffSchema } from "./signoff-schema";

/** What the page's action answers for a sign-off (other intents answer result undefined). */
export type SignOffActionData = {
  result?: SubmissionResult<string[]>;
  signedOff?: { verdict: string; mailOk: boolean; recipients: readonly unknown[] } | null;
};

export function SignOffForm({
  verdict,
  filters,
  projects,
  actionData,
}: {
  verdict: "pass" | "fail" | "insufficient";
  filters: { from: string; to: string; project: string };
  projects: { id: string; name: string }[];
  actionData: SignOffActionData | undefined;
}) {
  const nav = useNavigation();
  const [form, fields] = useForm({
    lastResult: nav.state === "idle" ? actionData?.result : undefined,
    defaultValue: { decision: verdict === "pass" ? "approved" : "rejected", projectId: filters.project, from: filters.from, to: filters.to },
    onValidate({ formData }) {
      return parseWithZod(formData, { schema: signOffSchema });
    },
    shouldValidate: "onSubmit",
    shouldRevalidate: "onInput",
  });
  const done = actionData?.signedOff;
  return (
    <section aria-labelledby="h-signoff" className="card space-y-3">
      <h2 id="h-signoff" className="text-2xl font-bold">
        Sign off this sensor
      </h2>
      <p>The statistics as they stand now are frozen into the sign-off. The crew who logged these shots and the admins get an e-mail.</p>
      {done ? (
        <p role="status" className="rounded-md border-2 border-pass p-3 font-bold" data-testid="signoff-done">
          Signed off (verdict {done.verdict}). E-mail {done.mailOk ? "sent" : "queued (the mail server did not answer; it will be retried)"} to {done.recipients.length} people.
        </p>
      ) : null}
      <Form method="post" {...getFormProps(form)} className="space-y-3">
        <input type="hidden" name="intent" value="sign-off" />
        <fieldset>
          <legend className="field-label">Decision</legend>
          <div className="flex flex-wrap gap-3">
            {(["approved", "rejected"] as const).map((d) => (
              <label key={d} className="flex min-h-11 cursor-pointer items-center gap-2 rounded-md border-2 border-line px-4">
                <input type="radio" name={fields.decision.name} value={d} defaultChecked={fields.decision.initialValue === d} className="h-5 w-5" />
                {d === "approved" ? "✓ Approve for the job" : "✗ Reject (pull from the job)"}
              </label>
            ))}
          </div>
          {fields.decision.errors ? <p className="field-error">{fields.decision.errors[0]}</p> : null}
        </fieldset>
        <div className="grid gap-3 sm:grid-cols-3">
          <div>
            <label htmlFor={fields.projectId.id} className="field-label">
              Project
            </label>
            <select {...getSelectProps(fields.projectId)} key={fields.projectId.key} className="input">
              <option value="">No project (all shots)</option>
              {projects.map((p) => (
                <option key={p.id} value={p.id}>
                  {p.name}
                </option>
              ))}
            </select>
            {fields.projectId.errors ? <p className="field-error">{fields.projectId.errors[0]}</p> : null}
          </div>
          <div>
            <label htmlFor={fields.from.id} className="field-label">
              Period from
            </label>
            <input {...getInputProps(fields.from, { type: "date" })} key={fields.from.key} className="input" />
            {fields.from.errors ? (
              <p className="field-error" id={fields.from.errorId}>
                {fields.from.errors[0]}
              </p>
            ) : null}
          </div>
          <div>
            <label htmlFor={fields.to.id} className="field-label">
              Period to
            </label>
            <input {...getInputProps(fields.to, { type: "date" })} key={fields.to.key} className="input" />
            {fields.to.errors ? (
              <p className="field-error" id={fields.to.errorId}>
                {fields.to.errors[0]}
              </p>
            ) : null}
          </div>
        </div>
        <div>
          <label htmlFor={fields.note.id} className="field-label">
            Note {verdict === "pass" ? "(needed when rejecting)" : "(needed: the verdict is not pass)"}
          </label>
          <textarea {...getTextareaProps(fields.note)} key={fields.note.key} rows={3} className="input" />
          {fields.note.errors ? (
            <p className="field-error" id={fields.note.errorId}>
              {fields.note.errors[0]}
            </p>
          ) : null}
        </div>
        {form.errors ? <p className="field-error">{form.errors[0]}</p> : null}
        <button type="submit" className="btn" disabled={nav.state === "submitting"}>
          {nav.state === "submitting" ? "Signing off…" : "Record the sign-off"}
        </button>
      </Form>
    </section>
  );
}
