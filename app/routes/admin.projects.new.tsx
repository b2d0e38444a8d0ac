// /admin/projects/new: a project with its acceptance rule, sensors and sites (admin).
import { data, Link, redirect } from "react-router";
import type { Route } from "./+types/admin.projects.new";
import { ADMIN } from "~/auth/access";
import { setFlash } from "~/auth/flash.server";
import { requireRole } from "~/auth/guards.server";
import { RegistryNav } from "~/components/forms";
import { createProject, projectChoices } from "~/models/projects.server";
import { parseRegistryForm, projectSchema, toConformFieldErrors } from "~/contract/registry";
import { ProjectForm, projectDefaults } from "./admin.projects.form";
import { readFormCapped } from "~/http/body.server";

export const meta: Route.MetaFunction = () => [{ title: "New project — Shotbook" }];

export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, ADMIN);
  return { choices: await projectChoices() };
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requireRole(request, ADMIN);
  const submission = parseRegistryForm(await readFormCapped(request), projectSchema);
  if (submission.status !== "success") return data({ result: submission.reply() }, { status: submission.status === "error" ? 400 : 200 });
  const r = await createProject(user, { ...submission.value, tapeIds: submission.value.tapeIds ?? [], edmIds: submission.value.edmIds ?? [] });
  if (r.status === 400) return data({ result: submission.reply({ fieldErrors: toConformFieldErrors(r.body.errors) }) }, { status: 400 });
  if (r.status === 409) return data({ result: submission.reply({ formErrors: [r.body.error] }) }, { status: 409 });
  const text = r.status === 201 ? `Project “${submission.value.name}” added.` : `Project “${submission.value.name}” was already registered with these values.`;
  return redirect("/admin/projects", { headers: { "Set-Cookie": await setFlash(request, { kind: "ok", text }) } });
}

export default function NewProject({ loaderData, actionData }: Route.ComponentProps) {
  return (
    <div className="space-y-4">
      <RegistryNav />
      <p>
        <Link to="/admin/projects" className="underline underline-offset-4">
          ← All projects
        </Link>
      </p>
      <h1 className="text-3xl font-bold">New project</h1>
      <ProjectForm lastResult={actionData?.result} defaultValue={projectDefaults()} submitLabel="Add project" choices={loaderData.choices} />
    </div>
  );
}
