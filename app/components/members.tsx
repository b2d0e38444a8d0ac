// Project membership on the admin pages (issue 14): the members of a project, adding a person by
// e-mail, inviting a new person straight into the project, and removing (after a second, explicit
// step). Plain forms: they work without JavaScript; Conform keeps what was typed on an error.
import { getFormProps, getInputProps, useForm, type FieldMetadata, type SubmissionResult } from "@conform-to/react";
import { parseWithZod } from "@conform-to/zod/v4";
import { Form, Link, useNavigation } from "react-router";
import { ROLE_OPTIONS } from "~/auth/schemas";
import { Field, FieldErrors, Select } from "~/components/forms";
import { addMemberSchema, inviteMemberSchema, joinProjectSchema } from "~/components/member-schemas";

type Member = { userId: string; email: string; name: string; role: string; active: boolean; addedAt: string };
type Result = SubmissionResult<string[]> | null | undefined;

const ROLE_SHORT: Record<string, string> = {
  admin: "Admin",
  qa: "QA",
  crew: "Crew",
  viewer: "Viewer (client or auditor, read-only)",
};

function RemoveStep({ id, label, from, hidden }: { id: string; label: string; from: string; hidden: Record<string, string> }) {
  return (
    <details className="rounded-md border-2 border-line px-3">
      <summary className="flex min-h-11 cursor-pointer items-center font-bold">Remove…</summary>
      <Form method="post" className="space-y-2 pb-3">
        {Object.entries(hidden).map(([k, v]) => (
          <input key={k} type="hidden" name={k} value={v} />
        ))}
        <p>
          Remove {label} from {from}? They stop seeing its sensors, sessions and reports at once. Their records stay.
        </p>
        <button type="submit" className="btn-secondary border-fail text-fail" id={id}>
          Yes, remove {label}
        </button>
      </Form>
    </details>
  );
}

export function ProjectMembers({
  projectName,
  members,
  people,
  addResult,
  inviteResult,
}: {
  projectName: string;
  members: Member[];
  /** Addresses of people not yet members, offered as suggestions in the add box. */
  people: { email: string; name: string; role: string }[];
  addResult: Result;
  inviteResult: Result;
}) {
  const navigation = useNavigation();
  const busy = navigation.state !== "idle" && navigation.formMethod === "POST";
  const [addForm, addFields] = useForm({
    id: "add-member",
    lastResult: addResult,
    shouldValidate: "onSubmit",
    shouldRevalidate: "onInput",
    onValidate: ({ formData }) => parseWithZod(formData, { schema: addMemberSchema }),
  });
  const [inviteForm, inviteFields] = useForm({
    id: "invite-member",
    lastResult: inviteResult,
    defaultValue: { role: "viewer" },
    shouldValidate: "onSubmit",
    shouldRevalidate: "onInput",
    onValidate: ({ formData }) => parseWithZod(formData, { schema: inviteMemberSchema }),
  });
  return (
    <section id="members" className="card space-y-4" aria-labelledby="members-heading">
      <h2 id="members-heading" className="text-2xl font-bold">
        Members ({members.length})
      </h2>
      <p>Members see this project's sensors, sites, sessions, shots and reports, and nothing of other projects. Admins see every project without being listed.</p>
      {members.length === 0 ? (
        <p className="font-bold" data-testid="no-members">
          No members yet: only admins see this project.
        </p>
      ) : (
        <div className="overflow-x-auto">
          <table className="w-full border-collapse text-left" data-testid="members">
            <thead>
              <tr className="border-b-2 border-line">
                <th scope="col" className="p-2">
                  Person
                </th>
                <th scope="col" className="p-2">
                  Role
                </th>
                <th scope="col" className="p-2">
                  Member since
                </th>
                <th scope="col" className="p-2">
                  <span className="sr-only">Remove</span>
                </th>
              </tr>
            </thead>
            <tbody>
              {members.map((m) => (
                <tr key={m.userId} className="border-b border-line align-top">
                  <td className="p-2">
                    <Link to={`/admin/users/${m.userId}`} className="font-bold underline underline-offset-4">
                      {m.name || m.email}
                    </Link>
                    <br />
                    <span className="break-all">{m.email}</span>
                    {m.active ? null : <span className="ml-2 font-bold">✗ Deactivated</span>}
                  </td>
                  <td className="p-2">{ROLE_SHORT[m.role] ?? m.role}</td>
                  <td className="num p-2">{m.addedAt.slice(0, 10)}</td>
                  <td className="p-2">
                    <RemoveStep id={`remove-${m.userId}`} label={m.name || m.email} from={`“${projectName}”`} hidden={{ intent: "remove-member", userId: m.userId }} />
                  </td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      )}

      <div className="grid gap-6 lg:grid-cols-2">
        <Form method="post" {...getFormProps(addForm)} className="space-y-3 rounded-md border-2 border-line p-4" aria-labelledby="add-member-heading">
          <h3 id="add-member-heading" className="text-xl font-bold">
            Add a person who can sign in
          </h3>
          <input type="hidden" name="intent" value="add-member" />
          <FieldErrors id={addForm.errorId} errors={addForm.errors ?? []} />
          <div>
            <label htmlFor={addFields.email.id} className="field-label">
              E-mail address
            </label>
            <p id={`${addFields.email.id}-hint`} className="mb-1 text-sm text-muted">
              Someone already on the users page; suggestions appear as you type.
            </p>
            <EmailInput meta={addFields.email} listId="member-candidates" />
            <FieldErrors id={addFields.email.errorId} errors={addFields.email.errors ?? []} />
          </div>
          <datalist id="member-candidates">
            {people.map((p) => (
              <option key={p.email} value={p.email}>
                {p.name ? `${p.name} (${p.role})` : p.role}
              </option>
            ))}
          </datalist>
          <button type="submit" className="btn" disabled={busy}>
            Add member
          </button>
        </Form>

        <Form method="post" {...getFormProps(inviteForm)} className="space-y-3 rounded-md border-2 border-line p-4" aria-labelledby="invite-member-heading">
          <h3 id="invite-member-heading" className="text-xl font-bold">
            Invite a new person into this project
          </h3>
          <p className="text-sm text-muted">They get the usual invitation e-mail and see this project from their first sign-in.</p>
          <input type="hidden" name="intent" value="invite-member" />
          <FieldErrors id={inviteForm.errorId} errors={inviteForm.errors ?? []} />
          <Field meta={inviteFields.name} label="Name (optional)" />
          <Field meta={inviteFields.email} type="email" label="E-mail address" />
          <Select meta={inviteFields.role} label="Role" options={ROLE_OPTIONS.map((r) => ({ value: r, label: ROLE_SHORT[r]! }))} />
          <button type="submit" className="btn" disabled={busy}>
            Invite and add
          </button>
        </Form>
      </div>
    </section>
  );
}

// eslint-disable-next-line @typescript-eslint/no-explicit-any
function EmailInput({ meta, listId }: { meta: FieldMetadata<any, any, any>; listId: string }) {
  const { key, ...props } = getInputProps(meta, { type: "email", ariaDescribedBy: `${meta.id}-hint` });
  return <input key={key} {...props} list={listId} className="input" autoComplete="off" />;
}

type Membership = { projectId: string; name: string; client: string; retiredAt: string | null; addedAt: string };

export function UserProjects({
  userLabel,
  role,
  memberships,
  choices,
  joinResult,
}: {
  userLabel: string;
  role: string;
  memberships: Membership[];
  choices: { id: string; name: string; client: string }[];
  joinResult: Result;
}) {
  const navigation = useNavigation();
  const busy = navigation.state !== "idle" && navigation.formMethod === "POST";
  const [form, fields] = useForm({
    id: "join-project",
    lastResult: joinResult,
    shouldValidate: "onSubmit",
    shouldRevalidate: "onInput",
    onValidate: ({ formData }) => parseWithZod(formData, { schema: joinProjectSchema }),
  });
  return (
    <section id="projects" className="card space-y-3" aria-labelledby="projects-heading">
      <h2 id="projects-heading" className="text-2xl font-bold">
        Projects ({memberships.length})
      </h2>
      {role === "admin" ? <p>An admin sees every project; memberships only matter if the role changes.</p> : <p>{userLabel} sees only the records of these projects.</p>}
      {memberships.length === 0 ? (
        <p className="font-bold" data-testid="no-projects">
          Not a member of any project{role === "admin" ? "." : ": they see no sensors, sessions or reports yet."}
        </p>
      ) : (
        <ul className="space-y-2" data-testid="user-projects">
          {memberships.map((m) => (
            <li key={m.projectId} className="flex flex-wrap items-start justify-between gap-2 border-b border-line pb-2">
              <span>
                <Link to={`/admin/projects/${m.projectId}`} className="font-bold underline underline-offset-4">
                  {m.name}
                </Link>
                {m.client ? ` — ${m.client}` : ""}
                {m.retiredAt ? <span className="ml-2 rounded border-2 border-line px-1.5 text-sm uppercase">Retired</span> : null}
                <br />
                <span className="num text-sm text-muted">member since {m.addedAt.slice(0, 10)}</span>
              </span>
              <RemoveStep id={`leave-${m.projectId}`} label={userLabel} from={`“${m.name}”`} hidden={{ intent: "leave-project", projectId: m.projectId }} />
            </li>
          ))}
        </ul>
      )}
      {choices.length ? (
        <Form method="post" {...getFormProps(form)} className="flex flex-wrap items-end gap-3">
          <input type="hidden" name="intent" value="join-project" />
          <FieldErrors id={form.errorId} errors={form.errors ?? []} />
          <Select
            className="min-w-64 flex-1"
            meta={fields.projectId}
            label={`Add ${userLabel} to a project`}
            placeholder="— choose a project —"
            options={choices.map((c) => ({ value: c.id, label: c.client ? `${c.name} (${c.client})` : c.name }))}
          />
          <button type="submit" className="btn" disabled={busy}>
            Add to project
          </button>
        </Form>
      ) : (
        <p className="text-muted">Member of every project in use.</p>
      )}
    </section>
  );
}
