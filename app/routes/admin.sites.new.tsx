// /admin/sites/new: a test range or baseline with its stations and targets (admin).
import { data, Link, redirect } from "react-router";
import type { Route } from "./+types/admin.sites.new";
import { ADMIN } from "~/auth/access";
import { setFlash } from "~/auth/flash.server";
import { requireRole } from "~/auth/guards.server";
import { RegistryNav } from "~/components/forms";
import { parseRegistryForm, siteSchema, toConformFieldErrors } from "~/contract/registry";
import { createSite } from "~/models/sites.server";
import { SiteForm, siteDefaults } from "./admin.sites.form";
import { BODY_LIMITS, readFormCapped } from "~/http/body.server";

export const meta: Route.MetaFunction = () => [{ title: "New site — Shotbook" }];

export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, ADMIN);
  return null;
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requireRole(request, ADMIN);
  const submission = parseRegistryForm(await readFormCapped(request, BODY_LIMITS.siteForm), siteSchema);
  if (submission.status !== "success") return data({ result: submission.reply() }, { status: submission.status === "error" ? 400 : 200 });
  const r = await createSite(user, submission.value);
  if (r.status === 400) return data({ result: submission.reply({ fieldErrors: toConformFieldErrors(r.body.errors) }) }, { status: 400 });
  if (r.status === 409) return data({ result: submission.reply({ formErrors: [r.body.error] }) }, { status: 409 });
  const n = submission.value.targets.length;
  const text = r.status === 201 ? `Site “${submission.value.name}” added with ${n} target${n === 1 ? "" : "s"}.` : `Site “${submission.value.name}” was already registered with these values.`;
  return redirect("/admin/sites", { headers: { "Set-Cookie": await setFlash(request, { kind: "ok", text }) } });
}

export default function NewSite({ actionData }: Route.ComponentProps) {
  return (
    <div className="space-y-4">
      <RegistryNav />
      <p>
        <Link to="/admin/sites" className="underline underline-offset-4">
          ← All sites
        </Link>
      </p>
      <h1 className="text-3xl font-bold">New site</h1>
      <SiteForm lastResult={actionData?.result} defaultValue={siteDefaults()} submitLabel="Add site" />
    </div>
  );
}
