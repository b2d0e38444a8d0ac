// Form fields built on Conform: every input has its label, its unit beside it, its own error
// message under it (linked by aria-describedby), and keeps what was typed when the server says no.
// Usable by every area; pass the field metadata from `useForm(...)`'s fields.
import { getCollectionProps, getInputProps, getSelectProps, getTextareaProps, type FieldMetadata } from "@conform-to/react";
import { Form, NavLink } from "react-router";

// Conform's metadata is generic over each field's own schema; these helpers take any field.
// eslint-disable-next-line @typescript-eslint/no-explicit-any
type Meta = FieldMetadata<any, any, any>;

function errorsOf(meta: Meta, all = false): string[] {
  const e = all ? Object.values((meta.allErrors ?? {}) as Record<string, string[]>).flat() : ((meta.errors as string[] | undefined) ?? []);
  return [...new Set(e)];
}

export function FieldErrors({ id, errors }: { id: string; errors: string[] }) {
  // Hidden when empty: no gap in a grid, still there for aria-describedby.
  if (errors.length === 0) return <span id={id} hidden />;
  return (
    <div id={id} className="field-error" role="alert">
      {errors.map((e) => (
        <p key={e}>
          <span aria-hidden="true">⚠ </span>
          {e}
        </p>
      ))}
    </div>
  );
}

function Hint({ id, children }: { id: string; children?: React.ReactNode }) {
  return children ? (
    <p id={id} className="mb-1 text-sm text-muted">
      {children}
    </p>
  ) : null;
}

type Common = { meta: Meta; label: React.ReactNode; hint?: React.ReactNode; className?: string };

function describedBy(meta: Meta, hint: React.ReactNode, extra?: string) {
  return [hint ? `${meta.id}-hint` : null, extra].filter(Boolean).join(" ") || undefined;
}

export function Field({
  meta,
  label,
  hint,
  className,
  type = "text",
  autoComplete,
  placeholder,
}: Common & { type?: "text" | "email" | "date" | "url" | "tel" | "search"; autoComplete?: string; placeholder?: string }) {
  const errors = errorsOf(meta);
  const { key, ...props } = getInputProps(meta, { type, ariaDescribedBy: describedBy(meta, hint) });
  return (
    <div className={className}>
      <label htmlFor={meta.id} className="field-label">
        {label}
      </label>
      <Hint id={`${meta.id}-hint`}>{hint}</Hint>
      <input key={key} {...props} className="input" autoComplete={autoComplete ?? "off"} placeholder={placeholder} />
      <FieldErrors id={meta.errorId} errors={errors} />
    </div>
  );
}

/**
 * A number with its unit shown beside the box. A text box in decimal input mode (not
 * type=number), so whatever was typed — "12,5", "abc" — comes back on an error and is seen.
 */
export function NumberField({ meta, label, unit, hint, className, integer, placeholder, allErrors }: Common & { unit?: string; integer?: boolean; placeholder?: string; allErrors?: boolean }) {
  const errors = errorsOf(meta, allErrors);
  const unitId = `${meta.id}-unit`;
  const { key, ...props } = getInputProps(meta, {
    type: "text",
    ariaDescribedBy: describedBy(meta, hint, unit ? unitId : undefined),
    ariaInvalid: allErrors ? "allErrors" : "errors",
  });
  return (
    <div className={className}>
      <label htmlFor={meta.id} className="field-label">
        {label}
      </label>
      <Hint id={`${meta.id}-hint`}>{hint}</Hint>
      <div className="flex items-stretch">
        <input key={key} {...props} inputMode={integer ? "numeric" : "decimal"} autoComplete="off" placeholder={placeholder} className={`input num ${unit ? "rounded-r-none" : ""}`} />
        {unit ? (
          <span id={unitId} className="flex min-w-14 items-center justify-center rounded-r-md border-2 border-l-0 border-line bg-surface px-3 font-bold">
            {unit}
          </span>
        ) : null}
      </div>
      <FieldErrors id={meta.errorId} errors={errors} />
    </div>
  );
}

export function TextArea({ meta, label, hint, className, rows = 3 }: Common & { rows?: number }) {
  const { key, ...props } = getTextareaProps(meta, { ariaDescribedBy: describedBy(meta, hint) });
  return (
    <div className={className}>
      <label htmlFor={meta.id} className="field-label">
        {label}
      </label>
      <Hint id={`${meta.id}-hint`}>{hint}</Hint>
      <textarea key={key} {...props} rows={rows} className="input" />
      <FieldErrors id={meta.errorId} errors={errorsOf(meta)} />
    </div>
  );
}

export function Select({ meta, label, hint, className, options, placeholder }: Common & { options: readonly { value: string; label: string }[]; placeholder?: string }) {
  const { key, ...props } = getSelectProps(meta, { ariaDescribedBy: describedBy(meta, hint) });
  return (
    <div className={className}>
      <label htmlFor={meta.id} className="field-label">
        {label}
      </label>
      <Hint id={`${meta.id}-hint`}>{hint}</Hint>
      <select key={key} {...props} className="input">
        {placeholder !== undefined ? <option value="">{placeholder}</option> : null}
        {options.map((o) => (
          <option key={o.value} value={o.value}>
            {o.label}
          </option>
        ))}
      </select>
      <FieldErrors id={meta.errorId} errors={errorsOf(meta)} />
    </div>
  );
}

/** One tick box; unticked sends nothing (the schema's default decides). */
export function Checkbox({ meta, label, hint, className }: Common) {
  const { key, ...props } = getInputProps(meta, { type: "checkbox", ariaDescribedBy: describedBy(meta, hint) });
  return (
    <div className={className}>
      <label htmlFor={meta.id} className="flex min-h-11 cursor-pointer items-center gap-3 font-bold">
        <input key={key} {...props} className="h-6 w-6 shrink-0 accent-accent" />
        <span>{label}</span>
      </label>
      <Hint id={`${meta.id}-hint`}>{hint}</Hint>
      <FieldErrors id={meta.errorId} errors={errorsOf(meta)} />
    </div>
  );
}

/** Choices as large radio rows; for yes/no use values "true"/"false" (the registry's form parser reads them). */
export function RadioGroup({ meta, label, hint, className, options }: Common & { options: readonly { value: string; label: React.ReactNode; hint?: React.ReactNode }[] }) {
  const errors = errorsOf(meta);
  const items = getCollectionProps(meta, { type: "radio", options: options.map((o) => o.value), ariaDescribedBy: describedBy(meta, hint) });
  return (
    <fieldset className={className} aria-describedby={[hint ? `${meta.id}-hint` : null, errors.length ? meta.errorId : null].filter(Boolean).join(" ") || undefined}>
      <legend className="field-label">{label}</legend>
      <Hint id={`${meta.id}-hint`}>{hint}</Hint>
      <div className="flex flex-wrap gap-2">
        {items.map(({ key, ...props }, i) => (
          <label
            key={key}
            htmlFor={props.id}
            className="flex min-h-11 cursor-pointer items-center gap-3 rounded-md border-2 border-line bg-bg px-3 py-2 has-[:checked]:border-accent has-[:checked]:font-bold"
          >
            <input {...props} className="h-5 w-5 shrink-0 accent-accent" />
            <span>
              {options[i]!.label}
              {options[i]!.hint ? <span className="block text-sm font-normal text-muted">{options[i]!.hint}</span> : null}
            </span>
          </label>
        ))}
      </div>
      <FieldErrors id={meta.errorId} errors={errors} />
    </fieldset>
  );
}

/** Several tick boxes under one name (a list of ids). */
export function CheckboxGroup({ meta, label, hint, className, options, empty }: Common & { options: readonly { value: string; label: React.ReactNode }[]; empty?: React.ReactNode }) {
  const errors = errorsOf(meta, true);
  const items = options.length ? getCollectionProps(meta, { type: "checkbox", options: options.map((o) => o.value), ariaDescribedBy: describedBy(meta, hint) }) : [];
  return (
    <fieldset className={className}>
      <legend className="field-label">{label}</legend>
      <Hint id={`${meta.id}-hint`}>{hint}</Hint>
      {options.length === 0 ? <p className="text-muted">{empty ?? "Nothing to choose yet."}</p> : null}
      <div className="grid gap-2 sm:grid-cols-2">
        {items.map(({ key, ...props }, i) => (
          <label key={key} htmlFor={props.id} className="flex min-h-11 cursor-pointer items-center gap-3 rounded-md border-2 border-line bg-bg px-3 py-2">
            <input {...props} className="h-5 w-5 shrink-0 accent-accent" />
            <span>{options[i]!.label}</span>
          </label>
        ))}
      </div>
      <FieldErrors id={meta.errorId} errors={errors} />
    </fieldset>
  );
}

/** The banner above a form after a refused submission: how many fields need a fix. */
export function FormSummary({ errors, fieldErrorCount }: { errors?: string[]; fieldErrorCount: number }) {
  const form = [...new Set(errors ?? [])];
  if (form.length === 0 && fieldErrorCount === 0) return null;
  return (
    <div role="alert" className="rounded-md border-2 border-fail p-3 font-bold text-fail">
      <p>
        <span aria-hidden="true">⚠ </span>
        {fieldErrorCount > 0 ? `Not saved: ${fieldErrorCount === 1 ? "1 field needs" : `${fieldErrorCount} fields need`} a fix — see the messages below.` : "Not saved."}
      </p>
      {form.map((e) => (
        <p key={e}>{e}</p>
      ))}
    </div>
  );
}

/** Count of fields with a message, from Conform's form.allErrors. */
export function countFieldErrors(allErrors: Record<string, string[]> | undefined) {
  return Object.entries(allErrors ?? {}).filter(([name, list]) => name !== "" && list.length > 0).length;
}

export function FlashNotice({ flash }: { flash: { kind: "ok" | "warn"; text: string } | null }) {
  if (!flash) return null;
  const tone = flash.kind === "ok" ? "border-pass text-pass" : "border-warn text-warn";
  return (
    <p role="status" className={`rounded-md border-2 p-3 font-bold ${tone}`}>
      <span aria-hidden="true">{flash.kind === "ok" ? "✓ " : "⚠ "}</span>
      {flash.text}
    </p>
  );
}

/** The registry's tabs, above each of its admin pages. */
export function RegistryNav() {
  const tabs = [
    { to: "/admin/sensors", label: "Sensors" },
    { to: "/admin/tapes", label: "Tapes" },
    { to: "/admin/sites", label: "Sites" },
    { to: "/admin/projects", label: "Projects" },
    { to: "/admin/edms", label: "Reference EDMs" },
  ];
  return (
    <nav aria-label="Registry" className="no-print mb-4 flex flex-wrap gap-1 border-b-2 border-line pb-2">
      {tabs.map((t) => (
        <NavLink key={t.to} to={t.to} className={({ isActive }) => `flex min-h-11 items-center rounded-md px-4 font-bold ${isActive ? "bg-accent text-accent-fg" : "underline underline-offset-4"}`}>
          {t.label}
        </NavLink>
      ))}
    </nav>
  );
}

/**
 * Retire (with a written confirmation) or bring back a registry record. Retiring hides it from
 * new work and keeps it, and everything that refers to it, for history. A plain form: works without JS.
 */
export function RetirePanel({ what, label, retiredAt, usage, error }: { what: string; label: string; retiredAt: string | null; usage?: React.ReactNode; error?: string | null }) {
  if (retiredAt) {
    return (
      <section className="card space-y-3" aria-labelledby="retire-heading">
        <h2 id="retire-heading" className="text-xl font-bold">
          Retired on {retiredAt.slice(0, 10)}
        </h2>
        <p>This {what} is hidden from new work; its history stays.</p>
        <Form method="post">
          <input type="hidden" name="intent" value="restore" />
          <button type="submit" className="btn-secondary">
            Bring this {what} back into use
          </button>
        </Form>
      </section>
    );
  }
  return (
    <section className="card space-y-3" aria-labelledby="retire-heading">
      <h2 id="retire-heading" className="text-xl font-bold">
        Retire this {what}
      </h2>
      <p>
        Retiring hides “{label}” from new sessions and lists. Nothing is deleted: shots, sessions and reports that refer to it stay as they are. {usage}
      </p>
      <details open={Boolean(error)} className="rounded-md border-2 border-line p-3">
        <summary className="flex min-h-11 cursor-pointer items-center font-bold">Retire “{label}”…</summary>
        <Form method="post" className="mt-3 space-y-3">
          <input type="hidden" name="intent" value="retire" />
          <div>
            <label htmlFor="retire-reason" className="field-label">
              Reason (kept in the audit trail)
            </label>
            <input id="retire-reason" name="reason" className="input" autoComplete="off" />
          </div>
          <label htmlFor="retire-confirm" className="flex min-h-11 cursor-pointer items-center gap-3 font-bold">
            <input id="retire-confirm" type="checkbox" name="confirm" value="yes" className="h-6 w-6 accent-accent" aria-describedby="retire-error" />
            Yes, retire “{label}”
          </label>
          <FieldErrors id="retire-error" errors={error ? [error] : []} />
          <button type="submit" className="btn-secondary border-fail text-fail">
            Retire {what}
          </button>
        </Form>
      </details>
    </section>
  );
}

export type HistoryRow = { at: string; action: string; by: string; fields: string[]; reason: string };

export function RecordHistory({ rows }: { rows: HistoryRow[] }) {
  return (
    <section className="card space-y-2" aria-labelledby="history-heading">
      <h2 id="history-heading" className="text-xl font-bold">
        History
      </h2>
      {rows.length === 0 ? (
        <p className="text-muted">No changes recorded.</p>
      ) : (
        <ol className="space-y-1">
          {rows.map((r, i) => (
            <li key={i}>
              <span className="num">{r.at.slice(0, 16).replace("T", " ")} UTC</span> — <strong>{r.action}</strong> by {r.by}
              {r.fields.length ? <span className="text-muted">: {r.fields.join("; ")}</span> : null}
              {r.reason ? <span className="text-muted"> — “{r.reason}”</span> : null}
            </li>
          ))}
        </ol>
      )}
    </section>
  );
}
