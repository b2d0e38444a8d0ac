import { getFormProps, getInputProps, getSelectProps, useForm } from "@conform-to/react";
import { parseWithZod } from "@conform-to/zod/v4";
import { data, Form, Link, redirect, useNavigation } from "react-router";
import type { Route } from "./+types/admin.users";
import { ADMIN } from "~/auth/access";
import { setFlash, takeFlash } from "~/auth/flash.server";
import { requireRole } from "~/auth/guards.server";
import { answering, formError } from "~/http/app-error.server";
import { inviteSchema, ROLE_OPTIONS } from "~/auth/schemas";
import { formatWhen, Notice, ROLE_TEXT } from "~/auth/ui";
import { inviteUser, listUsers, normalizeEmail } from "~/models/users.server";
import { readFormCapped } from "~/http/body.server";

export const meta: Route.MetaFunction = () => [{ title: "Users — Admin — Shotbook" }];

export async function loader({ request }: Route.LoaderArgs) {
  const actor = await requireRole(request, ADMIN);
  const { flash, headers } = await takeFlash(request);
  return data({ users: await answering(() => listUsers(actor)), flash, me: actor.id }, { headers });
}

export async function action({ request }: Route.ActionArgs) {
  const actor = await requireRole(request, ADMIN);
  const submission = parseWithZod(await readFormCapped(request), { schema: inviteSchema });
  if (submission.status !== "success") return data({ result: submission.reply() }, { status: 400 });
  try {
    const { mailSent } = await inviteUser(actor, submission.value);
    const email = normalizeEmail(submission.value.email);
    const text = mailSent ? `Invitation sent to ${email}.` : `${email} was added, but the invitation e-mail could not be sent now; it will be retried. They can sign in at /login anyway.`;
    return redirect("/admin/users", { headers: { "Set-Cookie": await setFlash(request, { kind: mailSent ? "ok" : "warn", text }) } });
  } catch (e) {
    const err = formError(e);
    return data({ result: submission.reply(err.field ? { fieldErrors: { [err.field]: [err.message] } } : { formErrors: [err.message] }) }, { status: 400 });
  }
}

export default function AdminUsers({ loaderData, actionData }: Route.ComponentProps) {
  const navigation = useNavigation();
  const busy = navigation.state === "submitting";
  const [form, fields] = useForm({
    lastResult: actionData?.result,
    defaultValue: { role: "crew" },
    onValidate: ({ formData }) => parseWithZod(formData, { schema: inviteSchema }),
    shouldValidate: "onBlur",
    shouldRevalidate: "onInput",
  });
  return (
    <div className="space-y-6">
      <nav aria-label="Breadcrumb" className="text-lg">
        <Link to="/admin" className="underline underline-offset-4">
          Admin
        </Link>{" "}
        › Users
      </nav>
      <h1 className="text-3xl font-bold">Users</h1>
      {loaderData.flash ? <Notice kind={loaderData.flash.kind}>{loaderData.flash.text}</Notice> : null}

      <section aria-labelledby="invite-heading" className="card space-y-4">
        <h2 id="invite-heading" className="text-2xl font-bold">
          Invite a person
        </h2>
        <p>They get an e-mail with a link to the sign-in page. Only invited addresses can sign in.</p>
        <Form method="post" {...getFormProps(form)} className="grid gap-4 md:grid-cols-2">
          {form.errors?.length ? (
            <div className="md:col-span-2">
              <Notice kind="error" id={form.errorId}>
                {form.errors.join(" ")}
              </Notice>
            </div>
          ) : null}
          <div>
            <label htmlFor={fields.email.id} className="field-label">
              E-mail address
            </label>
            <input {...getInputProps(fields.email, { type: "email" })} key={fields.email.key} className="input" autoComplete="off" />
            {fields.email.errors ? (
              <p id={fields.email.errorId} className="field-error">
                {fields.email.errors.join(" ")}
              </p>
            ) : null}
          </div>
          <div>
            <label htmlFor={fields.name.id} className="field-label">
              Name (optional)
            </label>
            <input {...getInputProps(fields.name, { type: "text" })} key={fields.name.key} className="input" autoComplete="off" />
            {fields.name.errors ? (
              <p id={fields.name.errorId} className="field-error">
                {fields.name.errors.join(" ")}
              </p>
            ) : null}
          </div>
          <div className="md:col-span-2">
            <label htmlFor={fields.role.id} className="field-label">
              Role
            </label>
            <select {...getSelectProps(fields.role)} key={fields.role.key} className="input">
              {ROLE_OPTIONS.map((r) => (
                <option key={r} value={r}>
                  {ROLE_TEXT[r]}
                </option>
              ))}
            </select>
            {fields.role.errors ? (
              <p id={fields.role.errorId} className="field-error">
                {fields.role.errors.join(" ")}
              </p>
            ) : null}
          </div>
          <div className="md:col-span-2">
            <button type="submit" className="btn" disabled={busy}>
              {busy ? "Sending…" : "Send invitation"}
            </button>
          </div>
        </Form>
      </section>

      <section aria-labelledby="list-heading" className="space-y-3">
        <h2 id="list-heading" className="text-2xl font-bold">
          Everyone ({loaderData.users.length})
        </h2>
        {loaderData.users.length === 0 ? (
          <p className="card">No users yet.</p>
        ) : (
          <div className="overflow-x-auto">
            <table className="w-full border-collapse text-left">
              <thead>
                <tr className="border-b-2 border-line">
                  <th scope="col" className="p-2">
                    Person
                  </th>
                  <th scope="col" className="p-2">
                    Role
                  </th>
                  <th scope="col" className="p-2">
                    Status
                  </th>
                  <th scope="col" className="p-2">
                    Last sign-in
                  </th>
                  <th scope="col" className="p-2 text-right">
                    Signed-in devices
                  </th>
                  <th scope="col" className="p-2">
                    <span className="sr-only">Actions</span>
                  </th>
                </tr>
              </thead>
              <tbody>
                {loaderData.users.map((u) => (
                  <tr key={u.id} className="border-b border-line">
                    <td className="p-2">
                      <span className="font-bold">{u.name || "—"}</span>
                      <br />
                      <span className="break-all">{u.email}</span>
                      {u.id === loaderData.me ? <span className="ml-2 text-sm text-muted">(you)</span> : null}
                    </td>
                    <td className="p-2 uppercase">{u.role}</td>
                    <td className="p-2">{u.active ? "Active" : <span className="font-bold">✗ Deactivated</span>}</td>
                    <td className="p-2">{formatWhen(u.lastSignInAt)}</td>
                    <td className="num p-2 text-right">{u.activeSessions}</td>
                    <td className="p-2">
                      <Link to={`/admin/users/${u.id}`} className="btn-secondary" aria-label={`Manage ${u.email}`}>
                        Manage
                      </Link>
                    </td>
                  </tr>
                ))}
              </tbody>
            </table>
          </div>
        )}
      </section>
    </div>
  );
}
