// /admin/projects/:projectId: edit a project and its rule; retire it or bring it back (admin).
import type { SubmissionResult } from "@conform-to/react";
import { parseWithZod } from "@conform-to/zod/v4";
import { data, Link, redirect } from "react-router";
import type { Route } from "./+types/admin.projects.$projectId";
import { ADMIN } from "~/auth/access";
import { setFlash, takeFlash } from "~/auth/flash.server";
import { requireRole } from "~/auth/guards.server";
import { formError } from "~/http/app-error.server";
import { FlashNotice, RecordHistory, RegistryNav, RetirePanel } from "~/components/forms";
import { ProjectMembers } from "~/components/members";
import { addMemberSchema, inviteMemberSchema } from "~/components/member-schemas";
import { addMember, inviteMember, listMembers, removeMember, usersByEmail } from "~/models/members.server";
import { listUsers, normalizeEmail } from "~/models/users.server";
import { getProject, projectChoices, restoreProject, retireProject, updateProject } from "~/models/projects.server";
import { parseRegistryForm, projectSchema, toConformFieldErrors } from "~/contract/registry";
import { registryHistory } from "~/models/sensors.server";
import { invariantResponse } from "~/utils/http";
import { ProjectForm, projectDefaults } from "./admin.projects.form";
import { readFormCapped } from "~/http/body.server";

export const meta: Route.MetaFunction = ({ data }) => [{ title: `${data?.project.name ?? "Project"} — Shotbook` }];

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireRole(request, ADMIN);
  const project = await getProject(params.projectId);
  invariantResponse(project, "There is no project with this id.", { status: 404 });
  const [choices, history, members, everyone, { flash, headers }] = await Promise.all([
    projectChoices(project),
    registryHistory("project", project.id),
    listMembers(user, project.id),
    listUsers(user),
    takeFlash(request),
  ]);
  const memberIds = new Set((members ?? []).map((m) => m.userId));
  // Admins see every project anyway, so the suggestions are the other roles' people.
  const people = everyone.filter((u) => u.active && u.role !== "admin" && !memberIds.has(u.id)).map((u) => ({ email: u.email, name: u.name, role: u.role }));
  return data({ project, choices, history, members: members ?? [], people, flash }, { headers });
}

type MemberResults = { addResult?: SubmissionResult<string[]>; inviteResult?: SubmissionResult<string[]> };
const NO_MEMBER_RESULT: MemberResults = { addResult: undefined, inviteResult: undefined };

/** Membership intents (issue 14): add by e-mail, invite into the project, remove. Null for the others. */
async function memberAction(request: Request, user: { id: string; role: "admin"; name?: string; email?: string }, projectId: string, formData: FormData) {
  const intent = formData.get("intent");
  const back = async (kind: "ok" | "warn", text: string) => redirect(`/admin/projects/${projectId}#members`, { headers: { "Set-Cookie": await setFlash(request, { kind, text }) } });
  const fail = (status: 400, parts: MemberResults) => data({ result: undefined, retireError: null, ...NO_MEMBER_RESULT, ...parts }, { status });

  if (intent === "remove-member") {
    const userId = String(formData.get("userId") ?? "");
    const r = await removeMember(user, projectId, userId);
    invariantResponse(r.status !== 404, r.status === 404 ? r.body.error : "", { status: 404 });
    return back("ok", r.body.changed ? "Removed from the project: they no longer see its records." : "They were not a member; nothing changed.");
  }
  if (intent === "add-member") {
    const submission = parseWithZod(formData, { schema: addMemberSchema });
    if (submission.status !== "success") return fail(400, { addResult: submission.reply() });
    const email = normalizeEmail(submission.value.email);
    const found = (await usersByEmail([email])).get(email);
    if (!found) {
      return fail(400, { addResult: submission.reply({ fieldErrors: { email: [`No user has the address ${email}. Invite them with the form beside this one.`] } }) });
    }
    const r = await addMember(user, projectId, found.id);
    invariantResponse(r.status !== 404, "There is no project with this id.", { status: 404 });
    const note = found.role === "admin" ? " (an admin sees every project anyway)" : "";
    return back("ok", r.body.changed ? `${email} is now a member${note}.` : `${email} was already a member; nothing changed.`);
  }
  if (intent === "invite-member") {
    const submission = parseWithZod(formData, { schema: inviteMemberSchema });
    if (submission.status !== "success") return fail(400, { inviteResult: submission.reply() });
    try {
      const r = await inviteMember(user, projectId, submission.value);
      invariantResponse(r.status !== 404, "There is no project with this id.", { status: 404 });
      const email = normalizeEmail(submission.value.email);
      return r.body.mailSent
        ? back("ok", `Invitation sent to ${email}; they are a member of this project.`)
        : back("warn", `${email} was added to this project, but the invitation e-mail could not be sent now; it will be retried. They can sign in at /login anyway.`);
    } catch (e) {
      const err = formError(e);
      const message = err.field === "email" ? `${err.message} Add them with “Add a person who can sign in”.` : err.message;
      return fail(400, { inviteResult: submission.reply(err.field ? { fieldErrors: { [err.field]: [message] } } : { formErrors: [message] }) });
    }
  }
  return null;
}

export async function action({ request, params }: Route.ActionArgs) {
  const user = await requireRole(request, ADMIN);
  const formData = await readFormCapped(request);
  const intent = formData.get("intent");
  const back = async (text: string) => redirect("/admin/projects", { headers: { "Set-Cookie": await setFlash(request, { kind: "ok", text }) } });
  const membership = await memberAction(request, user as typeof user & { role: "admin" }, params.projectId, formData);
  if (membership) return membership;

  if (intent === "retire") {
    if (formData.get("confirm") !== "yes") return data({ retireError: "Tick “Yes, retire” to confirm.", result: undefined, ...NO_MEMBER_RESULT }, { status: 400 });
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
  if (submission.status !== "success") return data({ result: submission.reply(), retireError: null, ...NO_MEMBER_RESULT }, { status: submission.status === "error" ? 400 : 200 });
  // The form always shows the tape and EDM boxes: none ticked means none (not "leave them as they are").
  const r = await updateProject(user, params.projectId, { ...submission.value, tapeIds: submission.value.tapeIds ?? [], edmIds: submission.value.edmIds ?? [] });
  invariantResponse(r.status !== 404, "There is no project with this id.", { status: 404 });
  if (r.status === 400) return data({ result: submission.reply({ fieldErrors: toConformFieldErrors(r.body.errors) }), retireError: null, ...NO_MEMBER_RESULT }, { status: 400 });
  if (r.status === 409) return data({ result: submission.reply({ formErrors: [r.body.error] }), retireError: null, ...NO_MEMBER_RESULT }, { status: 409 });
  const changed = (r.body.changed as string[] | undefined) ?? [];
  return back(changed.length ? `Project “${submission.value.name}” saved (${changed.join(", ")}).` : "No changes to save.");
}

export default function EditProject({ loaderData, actionData }: Route.ComponentProps) {
  const { project, choices, history, members, people, flash } = loaderData;
  return (
    <div className="space-y-4">
      <RegistryNav />
      <p>
        <Link to="/admin/projects" className="underline underline-offset-4">
          ← All projects
        </Link>
      </p>
      <h1 className="text-3xl font-bold">
        {project.name} {project.retiredAt ? <span className="rounded border-2 border-line px-1.5 align-middle text-base uppercase">Retired</span> : null}
      </h1>
      <p className="text-muted">
        Id <code className="num">{project.id}</code>.{" "}
        <a href="#members" className="underline underline-offset-4">
          Members ({members.length})
        </a>
      </p>
      {/* issue 14 */}
      <p>
        <Link to={`/review/projects/${project.id}/report`} className="btn-secondary">
          Project verification report
        </Link>
      </p>
      <FlashNotice flash={flash} />
      <ProjectForm lastResult={actionData?.result} defaultValue={projectDefaults(project)} submitLabel="Save changes" choices={choices} />
      <ProjectMembers
        // A new member list is a fresh start for the add and invite forms (nothing left typed after a success).
        key={members.map((m) => m.userId).join(",")}
        projectName={project.name}
        members={members}
        people={people}
        addResult={actionData?.addResult}
        inviteResult={actionData?.inviteResult}
      />
      <RetirePanel what="project" label={project.name} retiredAt={project.retiredAt} error={actionData?.retireError} />
      <RecordHistory rows={history} />
    </div>
  );
}
