// QA's re-shoot requests for one sensor (issue 12): the form that sends one to the crew's
// tablets and the list with each request's state, which QA closes (done or withdrawn).
import { Form, useNavigation } from "react-router";
import { getFormProps, getInputProps, getSelectProps, getTextareaProps, useForm, type SubmissionResult } from "@conform-to/react";
import { parseWithZod } from "@conform-to/zod/v4";
import { reshootSchema } from "~/contract/reshoot";
import { LocalTime } from "./local-time";

type Row = {
  id: string;
  siteName: string;
  projectName: string | null;
  wanted: string;
  reason: string;
  byName: string;
  createdAt: string;
  state: "open" | "done" | "withdrawn";
  closedAt: string | null;
  closedByName: string | null;
};

type Options = { sites: { id: string; name: string }[]; projects: { id: string; name: string }[] } | null;

const STATE_WORD = { open: "◯ Open: on the crew's tablets", done: "✓ Done", withdrawn: "✗ Withdrawn" } as const;

function pick<K extends string>(actionData: unknown, key: K): unknown {
  return actionData && typeof actionData === "object" && key in actionData ? (actionData as Record<K, unknown>)[key] : undefined;
}

export function ReshootPanel({ sensorLabel, reshoots, options, actionData }: { sensorLabel: string; reshoots: Row[]; options: Options; actionData: unknown }) {
  const nav = useNavigation();
  const busy = nav.state !== "idle" ? nav.formData?.get("intent") : null;
  const result = pick(actionData, "reshootResult") as SubmissionResult<string[]> | undefined;
  const stateResult = pick(actionData, "reshootStateResult") as SubmissionResult<string[]> | undefined;
  const sent = pick(actionData, "reshoot") as Row | null | undefined;
  const [form, fields] = useForm({
    id: "reshoot",
    lastResult: nav.state === "idle" ? result : undefined,
    // Empty, not undefined: after a reset the selects fall back to their "Choose…" line.
    defaultValue: { siteId: "", projectId: "", wanted: "", reason: "" },
    onValidate({ formData }) {
      return parseWithZod(formData, { schema: reshootSchema });
    },
    shouldValidate: "onSubmit",
    shouldRevalidate: "onInput",
  });
  const stateError = stateResult?.error ? Object.values(stateResult.error).flat().filter(Boolean)[0] : null;

  return (
    <section aria-labelledby="h-reshoot" className="card space-y-3" data-testid="reshoots">
      <h2 id="h-reshoot" className="text-2xl font-bold">
        Re-shoot requests
      </h2>
      {reshoots.length === 0 ? (
        <p className="text-muted">No re-shoot requests for {sensorLabel}.</p>
      ) : (
        <ul className="space-y-2" data-testid="reshoot-list">
          {reshoots.map((r) => (
            <li key={r.id} className={`rounded-md border-2 p-3 ${r.state === "open" ? "border-warn" : "border-line"}`} data-state={r.state}>
              <p className="font-bold">
                {STATE_WORD[r.state]} · {r.siteName}
                {r.projectName ? ` · ${r.projectName}` : ""}
              </p>
              <p>
                <span className="font-bold">Wanted:</span> {r.wanted}
              </p>
              <p>
                <span className="font-bold">Why:</span> {r.reason}
              </p>
              <p className="text-muted">
                Asked by {r.byName}, <LocalTime iso={r.createdAt} />
                {r.closedAt ? (
                  <>
                    {" "}
                    · {r.state === "done" ? "marked done" : "withdrawn"} by {r.closedByName ?? "—"}, <LocalTime iso={r.closedAt} />
                  </>
                ) : null}
              </p>
              {r.state === "open" && options ? (
                <div className="mt-2 flex flex-wrap gap-2">
                  {(["done", "withdrawn"] as const).map((st) => (
                    <Form method="post" key={st} preventScrollReset>
                      <input type="hidden" name="intent" value="reshoot-state" />
                      <input type="hidden" name="requestId" value={r.id} />
                      <input type="hidden" name="state" value={st} />
                      <button type="submit" className="btn-secondary" disabled={busy === "reshoot-state"}>
                        {st === "done" ? "✓ Mark done (the shots came)" : "✗ Withdraw (no longer wanted)"}
                      </button>
                    </Form>
                  ))}
                </div>
              ) : null}
            </li>
          ))}
        </ul>
      )}
      {stateError ? (
        <p className="field-error" role="alert">
          {stateError}
        </p>
      ) : null}
      {options ? (
        <>
          <h3 className="text-xl font-bold">Ask the crew to shoot again</h3>
          <p>The request travels with the tablets' reference data and shows for {sensorLabel} at the chosen site until you mark it done or withdraw it.</p>
          {sent && nav.state === "idle" ? (
            <p role="status" className="rounded-md border-2 border-pass p-3 font-bold" data-testid="reshoot-sent">
              ✓ Request sent for {sent.siteName}: the crew's tablets get it with their next copy of the reference data.
            </p>
          ) : null}
          {options.sites.length === 0 ? (
            <p className="text-muted">None of your projects holds a site: add one before asking for shots.</p>
          ) : (
            <Form method="post" {...getFormProps(form)} className="space-y-3" preventScrollReset>
              <input type="hidden" name="intent" value="reshoot" />
              <div className="grid gap-3 sm:grid-cols-2">
                <div>
                  <label htmlFor={fields.siteId.id} className="field-label">
                    Site
                  </label>
                  <select {...getSelectProps(fields.siteId)} key={fields.siteId.key} className="input">
                    <option value="">Choose a site…</option>
                    {options.sites.map((s) => (
                      <option key={s.id} value={s.id}>
                        {s.name}
                      </option>
                    ))}
                  </select>
                  {fields.siteId.errors ? (
                    <p className="field-error" id={fields.siteId.errorId}>
                      {fields.siteId.errors[0]}
                    </p>
                  ) : null}
                </div>
                <div>
                  <label htmlFor={fields.projectId.id} className="field-label">
                    Project (optional)
                  </label>
                  <select {...getSelectProps(fields.projectId)} key={fields.projectId.key} className="input">
                    <option value="">Any project holding the sensor and site</option>
                    {options.projects.map((p) => (
                      <option key={p.id} value={p.id}>
                        {p.name}
                      </option>
                    ))}
                  </select>
                  {fields.projectId.errors ? (
                    <p className="field-error" id={fields.projectId.errorId}>
                      {fields.projectId.errors[0]}
                    </p>
                  ) : null}
                </div>
              </div>
              <div>
                <label htmlFor={fields.wanted.id} className="field-label">
                  What to shoot (targets, range bands, reflectances, light)
                </label>
                <input {...getInputProps(fields.wanted, { type: "text" })} key={fields.wanted.key} className="input w-full" placeholder="e.g. dark board at 40 m, 5 shots in bright sun" />
                {fields.wanted.errors ? (
                  <p className="field-error" id={fields.wanted.errorId}>
                    {fields.wanted.errors[0]}
                  </p>
                ) : null}
              </div>
              <div>
                <label htmlFor={fields.reason.id} className="field-label">
                  Why
                </label>
                <textarea {...getTextareaProps(fields.reason)} key={fields.reason.key} rows={2} className="input w-full" placeholder="e.g. the bias on dark targets is near the limit" />
                {fields.reason.errors ? (
                  <p className="field-error" id={fields.reason.errorId}>
                    {fields.reason.errors[0]}
                  </p>
                ) : null}
              </div>
              {form.errors ? <p className="field-error">{form.errors[0]}</p> : null}
              <button type="submit" className="btn" disabled={busy === "reshoot"}>
                {busy === "reshoot" ? "Sending…" : "Send the request to the crew"}
              </button>
            </Form>
          )}
        </>
      ) : null}
    </section>
  );
}
