import { getFormProps, getInputProps, getSelectProps, useForm } from "@conform-to/react";
import { parseWithZod } from "@conform-to/zod/v4";
import { useState } from "react";
import { data, Form, Link, redirect, useNavigation } from "react-router";
import type { Route } from "./+types/admin.tokens";
import { ADMIN } from "~/auth/access";
import { setFlash, takeFlash } from "~/auth/flash.server";
import { requireRole } from "~/auth/guards.server";
import { answering } from "~/http/app-error.server";
import { tokenSchema } from "~/auth/schemas";
import { formatWhen, Notice } from "~/auth/ui";
import { createTokenFor, listTokens, revokeToken } from "~/models/tokens.server";
import { listUsers } from "~/models/users.server";
import { readFormCapped } from "~/http/body.server";

export const meta: Route.MetaFunction = () => [{ title: "API tokens — Admin — Shotbook" }];

export async function loader({ request }: Route.LoaderArgs) {
  const actor = await requireRole(request, ADMIN);
  const { flash, headers } = await takeFlash(request);
  const [tokens, users] = await answering(() => Promise.all([listTokens(actor), listUsers(actor)]));
  return data({ tokens, users: users.filter((u) => u.active).map((u) => ({ id: u.id, email: u.email, role: u.role })), flash }, { headers });
}

export async function action({ request }: Route.ActionArgs) {
  const actor = await requireRole(request, ADMIN);
  const form = await readFormCapped(request);
  if (form.get("intent") === "revoke") {
    const id = String(form.get("tokenId") ?? "");
    const row = await revokeToken(actor, id);
    if (!row) return data({ result: undefined, created: null, error: "That token does not exist or is already revoked." }, { status: 404 });
    return redirect("/admin/tokens", {
      headers: { "Set-Cookie": await setFlash(request, { kind: "ok", text: `Token “${row.name}” revoked: it stopped working at once.` }) },
    });
  }
  const submission = parseWithZod(form, { schema: tokenSchema });
  if (submission.status !== "success") return data({ result: submission.reply(), created: null, error: null }, { status: 400 });
  const made = await createTokenFor(actor, submission.value.userId, submission.value.name);
  if (!made) {
    return data({ result: submission.reply({ fieldErrors: { userId: ["There is no such user."] } }), created: null, error: null }, { status: 400 });
  }
  // The value is shown on this answer only; the database keeps its hash.
  return data({ result: submission.reply(), created: { name: submission.value.name, token: made.token }, error: null });
}

function CopyButton({ value }: { value: string }) {
  const [copied, setCopied] = useState(false);
  return (
    <button type="button" className="btn-secondary" onClick={() => void navigator.clipboard?.writeText(value).then(() => setCopied(true))}>
      {copied ? "✓ Copied" : "Copy"}
    </button>
  );
}

export default function AdminTokens({ loaderData, actionData }: Route.ComponentProps) {
  const navigation = useNavigation();
  const busy = navigation.state === "submitting";
  const [form, fields] = useForm({
    lastResult: actionData?.result,
    onValidate: ({ formData }) => parseWithZod(formData, { schema: tokenSchema }),
    shouldValidate: "onBlur",
    shouldRevalidate: "onInput",
  });
  return (
    <div className="space-y-6">
      <nav aria-label="Breadcrumb" className="text-lg">
        <Link to="/admin" className="underline underline-offset-4">
          Admin
        </Link>{" "}
        › API tokens
      </nav>
      <h1 className="text-3xl font-bold">API tokens</h1>
      <p className="max-w-3xl">
        Scripts and post-processing pipelines send <code>Authorization: Bearer &lt;token&gt;</code>. A token acts as its user, with that user's role. Only a hash is kept: copy the value when it is
        shown.
      </p>
      {loaderData.flash ? <Notice kind={loaderData.flash.kind}>{loaderData.flash.text}</Notice> : null}
      {actionData?.error ? <Notice kind="error">{actionData.error}</Notice> : null}
      {actionData?.created ? (
        <div className="card space-y-2 border-pass" role="status">
          <p className="font-bold text-pass">✓ Token “{actionData.created.name}” created. Copy it now — it is not shown again.</p>
          <div className="flex flex-wrap items-center gap-2">
            <code className="break-all rounded-md border-2 border-line bg-bg p-2 text-base" data-testid="new-token">
              {actionData.created.token}
            </code>
            <CopyButton value={actionData.created.token} />
          </div>
        </div>
      ) : null}

      <section className="card space-y-4" aria-labelledby="new-heading">
        <h2 id="new-heading" className="text-2xl font-bold">
          New token
        </h2>
        <Form method="post" {...getFormProps(form)} className="grid gap-4 md:grid-cols-3">
          <input type="hidden" name="intent" value="create" />
          <div>
            <label htmlFor={fields.userId.id} className="field-label">
              Acts as
            </label>
            <select {...getSelectProps(fields.userId)} key={fields.userId.key} className="input">
              <option value="">Pick a user…</option>
              {loaderData.users.map((u) => (
                <option key={u.id} value={u.id}>
                  {u.email} ({u.role})
                </option>
              ))}
            </select>
            {fields.userId.errors ? (
              <p id={fields.userId.errorId} className="field-error">
                {fields.userId.errors.join(" ")}
              </p>
            ) : null}
          </div>
          <div>
            <label htmlFor={fields.name.id} className="field-label">
              Name
            </label>
            <input {...getInputProps(fields.name, { type: "text" })} key={fields.name.key} className="input" placeholder="e.g. nightly report export" />
            {fields.name.errors ? (
              <p id={fields.name.errorId} className="field-error">
                {fields.name.errors.join(" ")}
              </p>
            ) : null}
          </div>
          <div className="flex items-end">
            <button type="submit" className="btn" disabled={busy}>
              Create token
            </button>
          </div>
        </Form>
      </section>

      <section className="space-y-3" aria-labelledby="list-heading">
        <h2 id="list-heading" className="text-2xl font-bold">
          Tokens in use ({loaderData.tokens.length})
        </h2>
        {loaderData.tokens.length === 0 ? (
          <p className="card">No tokens yet.</p>
        ) : (
          <div className="overflow-x-auto">
            <table className="w-full border-collapse text-left">
              <thead>
                <tr className="border-b-2 border-line">
                  <th scope="col" className="p-2">
                    Name
                  </th>
                  <th scope="col" className="p-2">
                    Acts as
                  </th>
                  <th scope="col" className="p-2">
                    Created
                  </th>
                  <th scope="col" className="p-2">
                    Last used
                  </th>
                  <th scope="col" className="p-2">
                    <span className="sr-only">Actions</span>
                  </th>
                </tr>
              </thead>
              <tbody>
                {loaderData.tokens.map((t) => (
                  <tr key={t.id} className="border-b border-line">
                    <td className="p-2 font-bold">{t.name}</td>
                    <td className="p-2">
                      <span className="break-all">{t.userEmail}</span> <span className="uppercase">({t.userRole})</span>
                      {t.userActive ? null : <span className="ml-1 font-bold">✗ user deactivated</span>}
                    </td>
                    <td className="p-2">{formatWhen(t.createdAt)}</td>
                    <td className="p-2">{formatWhen(t.lastUsedAt)}</td>
                    <td className="p-2">
                      <Form method="post">
                        <input type="hidden" name="intent" value="revoke" />
                        <input type="hidden" name="tokenId" value={t.id} />
                        <button type="submit" className="btn-secondary" aria-label={`Revoke token ${t.name}`}>
                          Revoke
                        </button>
                      </Form>
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
