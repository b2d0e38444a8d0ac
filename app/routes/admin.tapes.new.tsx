// /admin/tapes/new: register a tape (admin).
import { data, Link, redirect } from "react-router";
import type { Route } from "./+types/admin.tapes.new";
import { ADMIN } from "~/auth/access";
import { setFlash } from "~/auth/flash.server";
import { requireRole } from "~/auth/guards.server";
import { RegistryNav } from "~/components/forms";
import { parseRegistryForm, tapeSchema, toConformFieldErrors } from "~/contract/registry";
import { createTape } from "~/models/tapes.server";
import { TapeForm, tapeDefaults } from "./admin.tapes.form";
import { readFormCapped } from "~/http/body.server";

export const meta: Route.MetaFunction = () => [{ title: "New tape — Shotbook" }];

export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, ADMIN);
  return null;
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requireRole(request, ADMIN);
  const submission = parseRegistryForm(await readFormCapped(request), tapeSchema);
  if (submission.status !== "success") return data({ result: submission.reply() }, { status: submission.status === "error" ? 400 : 200 });
  const r = await createTape(user, submission.value);
  if (r.status === 400) return data({ result: submission.reply({ fieldErrors: toConformFieldErrors(r.body.errors) }) }, { status: 400 });
  if (r.status === 409) return data({ result: submission.reply({ formErrors: [r.body.error] }) }, { status: 409 });
  const text = r.status === 201 ? `Tape “${submission.value.label}” added.` : `Tape “${submission.value.label}” was already registered with these values.`;
  return redirect("/admin/tapes", { headers: { "Set-Cookie": await setFlash(request, { kind: "ok", text }) } });
}

export default function NewTape({ actionData }: Route.ComponentProps) {
  return (
    <div className="space-y-4">
      <RegistryNav />
      <p>
        <Link to="/admin/tapes" className="underline underline-offset-4">
          ← All tapes
        </Link>
      </p>
      <h1 className="text-3xl font-bold">New tape</h1>
      <TapeForm lastResult={actionData?.result} defaultValue={tapeDefaults()} submitLabel="Add tape" />
    </div>
  );
}
