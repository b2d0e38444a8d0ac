// The parts the admin pages of project-listed records (tapes, reference EDMs) share: the way back
// to the list with the record's title, and the read-only block a non-admin member sees of one of
// their projects' records (issue 14; one component since issue 13).
import { Link } from "react-router";

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
