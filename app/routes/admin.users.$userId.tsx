import type { SubmissionResult } from "@conform-to/react";
import { parseWithZod } from "@conform-to/zod/v4";
import { data, Form, Link, redirect, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/admin.users.$userId";
import { ADMIN } from "~/auth/access";
import { setFlash, takeFlash } from "~/auth/flash.server";
import { requireRole } from "~/auth/guards.server";
import { answering, formError } from "~/http/app-error.server";
import { ROLE_OPTIONS } from "~/auth/schemas";
import { formatWhen, Notice, ROLE_TEXT } from "~/auth/ui";
import { changeRole, getUserDetail, revokeSessions, setUserActive } from "~/models/users.server";
import { readFormCapped } from "~/http/body.server";
import { UserProjects } from "~/components/members";
import { joinProjectSchema } from "~/components/member-schemas";
import { addMember, projectsOfUser, projectsToJoin, removeMember } from "~/models/members.server";

export const meta: Route.MetaFunction = ({ data }) => [{ title: `${data?.detail.user.email ?? "User"} — Admin — Shotbook` }];

export async function loader({ request, params }: Route.LoaderArgs) {
  const actor = await requireRole(request, ADMIN);
  const detail = await answering(() => getUserDetail(actor, params.userId));
  if (!detail) throw data("There is no user with this id.", { status: 404 });
  const [{ flash, headers }, memberships, joinable] = await Promise.all([takeFlash(request), projectsOfUser(actor, params.userId), projectsToJoin(actor, params.userId)]);
  return data({ detail, flash, isMe: actor.id === params.userId, memberships: memberships ?? [], joinable }, { headers });
}

const intentSchema = z.discriminatedUnion("intent", [
  z.object({ intent: z.literal("role"), role: z.enum(ROLE_OPTIONS, { error: "Pick a role." }) }),
  z.object({ intent: z.literal("deactivate") }),
  z.object({ intent: z.literal("reactivate") }),
  z.object({ intent: z.literal("revoke-sessions"), sessionId: z.string().optional() }),
]);

/** Project membership from the user's side (issue 14): add to a project, remove from one. */
async function membershipAction(request: Request, actor: Awaited<ReturnType<typeof requireRole>>, userId: string, formData: FormData) {
  const intent = formData.get("intent");
  const back = async (text: string) => redirect(`/admin/users/${userId}#projects`, { headers: { "Set-Cookie": await setFlash(request, { kind: "ok", text }) } });
  if (intent === "join-project") {
    const submission = parseWithZod(formData, { schema: joinProjectSchema });
    if (submission.status !== "success") return data({ error: null, joinResult: submission.reply() as SubmissionResult<string[]> }, { status: 400 });
    const r = await addMember(actor, submission.value.projectId, userId);
    if (r.status === 404) {
      if (r.body.error.startsWith("No user")) throw data("There is no user with this id.", { status: 404 });
      return data({ error: null, joinResult: submission.reply({ fieldErrors: { projectId: ["That project no longer exists: reload the page."] } }) as SubmissionResult<string[]> }, { status: 400 });
    }
    return back(r.body.changed ? "Added to the project." : "Already a member; nothing changed.");
  }
  if (intent === "leave-project") {
    const r = await removeMember(actor, String(formData.get("projectId") ?? ""), userId);
    if (r.status === 404) throw data(r.body.error, { status: 404 });
    return back(r.body.changed ? "Removed from the project: they no longer see its records." : "Not a member of that project; nothing changed.");
  }
  return null;
}

export async function action({ request, params }: Route.ActionArgs) {
  const actor = await requireRole(request, ADMIN);
  const formData = await readFormCapped(request);
  const membership = await membershipAction(request, actor, params.userId, formData);
  if (membership) return membership;
  const parsed = intentSchema.safeParse(Object.fromEntries(formData));
  if (!parsed.success) return data({ error: parsed.error.issues[0]?.message ?? "Unknown change." }, { status: 400 });
  const input = parsed.data;
  const id = params.userId;
  try {
    let text: string;
    if (input.intent === "role") {
      const u = await changeRole(actor, id, input.role);
      if (!u) throw data("There is no user with this id.", { status: 404 });
      text = `Role is now ${input.role}. It applies from their next request, on every device.`;
    } else if (input.intent === "deactivate" || input.intent === "reactivate") {
      if (input.intent === "deactivate" && id === actor.id) return data({ error: "You cannot deactivate yourself." }, { status: 400 });
      const u = await setUserActive(actor, id, input.intent === "reactivate");
      if (!u) throw data("There is no user with this id.", { status: 404 });
      text = input.intent === "deactivate" ? "Deactivated: their sign-ins and API tokens stopped working." : "Reactivated: they can sign in again.";
    } else {
      const u = await getUserDetail(actor, id);
      if (!u) throw data("There is no user with this id.", { status: 404 });
      const n = await revokeSessions(actor, id, input.sessionId);
      text = `${n} ${n === 1 ? "sign-in" : "sign-ins"} ended. The device must sign in again.`;
    }
    return redirect(`/admin/users/${id}`, { headers: { "Set-Cookie": await setFlash(request, { kind: "ok", text }) } });
  } catch (e) {
    return data({ error: formError(e).message }, { status: 400 });
  }
}

export default function AdminUser({ loaderData, actionData }: Route.ComponentProps) {
  const { user, sessions, tokens } = loaderData.detail;
  const navigation = useNavigation();
  const busy = navigation.state === "submitting";
  return (
    <div className="space-y-6">
      <nav aria-label="Breadcrumb" className="text-lg">
        <Link to="/admin" className="underline underline-offset-4">
          Admin
        </Link>{" "}
        ›{" "}
        <Link to="/admin/users" className="underline underline-offset-4">
          Users
        </Link>{" "}
        › {user.email}
      </nav>
      <h1 className="text-3xl font-bold break-all">{user.name || user.email}</h1>
      <p className="text-lg">
        <span className="break-all">{user.email}</span> · <span className="uppercase">{user.role}</span> · {user.active ? "Active" : <strong>✗ Deactivated</strong>} · last sign-in{" "}
        {formatWhen(user.lastSignInAt)}
      </p>
      {loaderData.flash ? <Notice kind={loaderData.flash.kind}>{loaderData.flash.text}</Notice> : null}
      {actionData?.error ? <Notice kind="error">{actionData.error}</Notice> : null}

      <section className="card space-y-3" aria-labelledby="role-heading">
        <h2 id="role-heading" className="text-2xl font-bold">
          Role
        </h2>
        <Form method="post" className="flex flex-wrap items-end gap-3">
          <input type="hidden" name="intent" value="role" />
          <div className="min-w-64 flex-1">
            <label htmlFor="role" className="field-label">
              Role of {user.name || user.email}
            </label>
            <select id="role" name="role" defaultValue={user.role} className="input" key={user.role}>
              {ROLE_OPTIONS.map((r) => (
                <option key={r} value={r}>
                  {ROLE_TEXT[r]}
                </option>
              ))}
            </select>
          </div>
          <button type="submit" className="btn" disabled={busy}>
            Change role
          </button>
        </Form>
      </section>

      <UserProjects
        key={loaderData.memberships.map((m) => m.projectId).join(",")}
        userLabel={user.name || user.email}
        role={user.role}
        memberships={loaderData.memberships}
        choices={loaderData.joinable}
        joinResult={actionData && "joinResult" in actionData ? actionData.joinResult : undefined}
      />

      <section className="card space-y-3" aria-labelledby="sessions-heading">
        <h2 id="sessions-heading" className="text-2xl font-bold">
          Signed-in devices ({sessions.length})
        </h2>
        {sessions.length === 0 ? (
          <p>Not signed in anywhere.</p>
        ) : (
          <>
            <ul className="space-y-2">
              {sessions.map((s) => (
                <li key={s.id} className="flex flex-wrap items-center justify-between gap-2 border-b border-line pb-2">
                  <span>
                    Since {formatWhen(s.createdAt)}, until {formatWhen(s.expiresAt)}
                    <br />
                    <span className="text-sm text-muted">
                      {s.userAgent ?? "unknown device"} · {s.ip ?? "unknown address"}
                    </span>
                  </span>
                  <Form method="post">
                    <input type="hidden" name="intent" value="revoke-sessions" />
                    <input type="hidden" name="sessionId" value={s.id} />
                    <button type="submit" className="btn-secondary">
                      End this sign-in
                    </button>
                  </Form>
                </li>
              ))}
            </ul>
            <Form method="post">
              <input type="hidden" name="intent" value="revoke-sessions" />
              <button type="submit" className="btn" disabled={busy}>
                End all sign-ins
              </button>
            </Form>
          </>
        )}
      </section>

      <section className="card space-y-3" aria-labelledby="tokens-heading">
        <h2 id="tokens-heading" className="text-2xl font-bold">
          API tokens ({tokens.length})
        </h2>
        {tokens.length === 0 ? (
          <p>None.</p>
        ) : (
          <ul className="list-disc pl-6">
            {tokens.map((t) => (
              <li key={t.id}>
                {t.name} — last used {formatWhen(t.lastUsedAt)}
              </li>
            ))}
          </ul>
        )}
        <Link to="/admin/tokens" className="btn-secondary">
          Manage API tokens
        </Link>
      </section>

      {loaderData.isMe ? null : (
        <section className="card space-y-3" aria-labelledby="access-heading">
          <h2 id="access-heading" className="text-2xl font-bold">
            Access
          </h2>
          <Form method="post">
            {user.active ? (
              <>
                <p className="mb-3">Deactivating ends every sign-in and stops their API tokens at once. Their records stay.</p>
                <input type="hidden" name="intent" value="deactivate" />
                <button type="submit" className="btn-secondary border-fail text-fail">
                  ✗ Deactivate
                </button>
              </>
            ) : (
              <>
                <input type="hidden" name="intent" value="reactivate" />
                <button type="submit" className="btn">
                  Reactivate
                </button>
              </>
            )}
          </Form>
        </section>
      )}
    </div>
  );
}
