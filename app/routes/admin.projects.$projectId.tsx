// /admin/projects/:projectId: edit a project and its rule; retire it or bring it back (admin).
import { data, Link, redirect } from "react-router";
import type { Route } from "./+types/admin.projects.$projectId";
import { ADMIN } from "~/auth/access";
import { setFlash } from "~/auth/flash.server";
import { requireRole } from "~/auth/guards.server";
import { RecordHistory, RegistryNav, RetirePanel } from "~/components/forms";
import { getProject, projectChoices, restoreProject, retireProject, updateProject } from "~/models/projects.server";
import { parseRegistryForm, projectSchema, toConformFieldErrors } from "~/models/registry-schemas";
import { registryHistory } from "~/models/sensors.server";
import { invariantResponse } from "~/utils/http";
import { ProjectForm, projectDefaults } from "./admin.projects.form";
import { readFormCapped } from "~/http/body.server";

export const meta: Route.MetaFunction = ({ data }) => [{ title: `${data?.project.name ?? "Project"} — Shotbook` }];

export async function loader({ request, params }: Route.LoaderArgs) {
  await requireRole(request, ADMIN);
  const project = await getProject(params.projectId);
  invariantResponse(project, "There is no project with this id.", { status: 404 });
  const [choices, history] = await Promise.all([projectChoices(project), registryHistory("project", project.id)]);
  return { project, choices, history };
}

export async function action({ request, params }: Route.ActionArgs) {
  const user = await requireRole(request, ADMIN);
  const formData = await readFormCapped(request);
  const intent = formData.get("intent");
  const back = async (text: string) => redirect("/admin/projects", { headers: { "Set-Cookie": await setFlash(request, { kind: "ok", text }) } });

  if (intent === "retire") {
    if (formData.get("confirm") !== "yes") return data({ retireError: "Tick “Yes, retire” to confirm.", result: undefined }, { status: 400 });
    const r = await retireProject(user, params.projectId, String(formData.get("reason") ?? "").trim());
    invariantResponse(r.status !== 404, "There is no project with this id.", { status: 404 });
    return back("Project retired. Its sessions and sign-offs are kept.");
  }
  if (intent === "restore") {
    const r = await restoreProject(user, params.projectId);
    invariantResponse(r.status !== 404, "There is no project with this id.", { status: 404 });
    return back("Project back in use.");
  }

  const submission = parseRegistryForm(formData, projectSchema);
  if (submission.status !== "success") return data({ result: submission.reply(), retireError: null }, { status: submission.status === "error" ? 400 : 200 });
  const r = await updateProject(user, params.projectId, submission.value);
  invariantResponse(r.status !== 404, "There is no project with this id.", { status: 404 });
  if (r.status === 400) return data({ result: submission.reply({ fieldErrors: toConformFieldErrors(r.body.errors) }), retireError: null }, { status: 400 });
  if (r.status === 409) return data({ result: submission.reply({ formErrors: [r.body.error] }), retireError: null }, { status: 409 });
  const changed = (r.body.changed as string[] | undefined) ?? [];
  return back(changed.length ? `Project “${submission.value.name}” saved (${changed.join(", ")}).` : "No changes to save.");
}

export default function EditProject({ loaderData, actionData }: Route.ComponentProps) {
  const { project, choices, history } = loaderData;
  return (
    <div className="space-y-4">
      <RegistryNav />
      <p>
        <Link to="/admin/projects" className="underline underline-offset-4">
          ← All projects
        </Link>
      </p>
      <h1 className="text-3xl font-bold">
        {project.name}{" "}
        {project.retiredAt ? <span className="rounded border-2 border-line px-1.5 align-middle text-base uppercase">Retired</span> : null}
      </h1>
      <p className="text-muted">
        Id <code className="num">{project.id}</code>.
      </p>
      {/* issue 14 */}
      <p>
        <Link to={`/review/projects/${project.id}/report`} className="btn-secondary">
          Project verification report
        </Link>
      </p>
      <ProjectForm lastResult={actionData?.result} defaultValue={projectDefaults(project)} submitLabel="Save changes" choices={choices} />
      <RetirePanel what="project" label={project.name} retiredAt={project.retiredAt} error={actionData?.retireError} />
      <RecordHistory rows={history} />
    </div>
  );
}
