// /admin/edms.new: register a reference EDM (issue 15) (admin).
import { data, Link, redirect } from "react-router";
import type { Route } from "./+types/admin.edms.new";
import { ADMIN } from "~/auth/access";
import { setFlash } from "~/auth/flash.server";
import { requireRole } from "~/auth/guards.server";
import { RegistryNav } from "~/components/forms";
import { parseRegistryForm, edmSchema, toConformFieldErrors } from "~/contract/registry";
import { readFormCapped } from "~/http/body.server";
import { createEdm } from "~/models/edms.server";
import { EdmForm, edmDefaults } from "./admin.edms.form";

export const meta: Route.MetaFunction = () => [{ title: "New reference EDM — Shotbook" }];

export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, ADMIN);
  return null;
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requireRole(request, ADMIN);
  const submission = parseRegistryForm(await readFormCapped(request), edmSchema);
  if (submission.status !== "success") return data({ result: submission.reply() }, { status: submission.status === "error" ? 400 : 200 });
  const r = await createEdm(user, submission.value);
  if (r.status === 400) return data({ result: submission.reply({ fieldErrors: toConformFieldErrors(r.body.errors) }) }, { status: 400 });
  if (r.status === 409) return data({ result: submission.reply({ formErrors: [r.body.error] }) }, { status: 409 });
  const text = r.status === 201 ? `Reference EDM “${submission.value.label}” added.` : `Reference EDM “${submission.value.label}” was already registered with these values.`;
  return redirect("/admin/edms", { headers: { "Set-Cookie": await setFlash(request, { kind: "ok", text }) } });
}

export default function NewEdm({ actionData }: Route.ComponentProps) {
  return (
    <div className="space-y-4">
      <RegistryNav />
      <p>
        <Link to="/admin/edms" className="underline underline-offset-4">
          ← All reference EDMs
        </Link>
      </p>
      <h1 className="text-3xl font-bold">New reference EDM</h1>
      <EdmForm lastResult={actionData?.result} defaultValue={edmDefaults()} submitLabel="Add reference EDM" />
    </div>
  );
}
