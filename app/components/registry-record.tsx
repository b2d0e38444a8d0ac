// The parts the registry's admin pages share (issue 13: one component each): the head of a list
// page, the way back to the list with a record's title, and the read-only block a non-admin member
// sees of one of their projects' tapes or reference EDMs (issue 14).
import { Link } from "react-router";
import { FlashNotice, RegistryNav } from "~/components/forms";

/** The link back to the list and the record's label, marked when it is retired. */
export function RecordTitle({ backTo, backLabel, label, retiredAt }: { backTo: string; backLabel: string; label: string; retiredAt: string | null }) {
  return (
    <>
      <p>
        <Link to={backTo} className="underline underline-offset-4">
          ← {backLabel}
        </Link>
      </p>
      <h1 className="text-3xl font-bold">
        {label} {retiredAt ? <span className="rounded border-2 border-line px-1.5 align-middle text-base uppercase">Retired</span> : null}
      </h1>
    </>
  );
}

/** What a non-admin member reads of a record: its figures as term / value rows, and who may change it. */
export function ReadOnlyRecord({
  backTo,
  backLabel,
  label,
  retiredAt,
  rows,
  testId,
  what,
}: {
  backTo: string;
  backLabel: string;
  label: string;
  retiredAt: string | null;
  rows: [string, React.ReactNode][];
  testId: string;
  what: string;
}) {
  return (
    <div className="space-y-4">
      <RecordTitle backTo={backTo} backLabel={backLabel} label={label} retiredAt={retiredAt} />
      <dl className="card grid gap-x-6 gap-y-2 sm:grid-cols-[max-content_1fr]" data-testid={testId}>
        {rows.map(([k, v]) => (
          <div key={k} className="contents">
            <dt className="font-bold">{k}</dt>
            <dd className="num">{v}</dd>
          </div>
        ))}
      </dl>
      <p className="text-muted">Only an admin changes {what} or the projects that use it.</p>
    </div>
  );
}

/**
 * The head of a registry list page: the admin's registry tabs, the title with its "+ New" button
 * (admins only), the flash notice and the switch that shows or hides the retired records.
 */
export function RegistryListHead({
  title,
  listTo,
  newLabel,
  plural,
  canEdit,
  flash,
  includeRetired,
  retiredCount,
}: {
  title: string;
  /** the list's path; the form for a new record is at `${listTo}/new` */
  listTo: string;
  newLabel: string;
  /** the records' name in the retired switch ("sensors", "EDMs") */
  plural: string;
  canEdit: boolean;
  flash: React.ComponentProps<typeof FlashNotice>["flash"];
  includeRetired: boolean;
  retiredCount: number;
}) {
  return (
    <>
      {canEdit ? <RegistryNav /> : null}
      <div className="flex flex-wrap items-center gap-3">
        <h1 className="text-3xl font-bold">{title}</h1>
        {canEdit ? (
          <Link to={`${listTo}/new`} className="btn ml-auto">
            + {newLabel}
          </Link>
        ) : null}
      </div>
      <FlashNotice flash={flash} />
      <p>
        <Link className="btn-secondary" to={includeRetired ? listTo : `${listTo}?retired=show`}>
          {includeRetired ? `Hide retired ${plural}` : `Show retired ${plural} (${retiredCount})`}
        </Link>
      </p>
    </>
  );
}
