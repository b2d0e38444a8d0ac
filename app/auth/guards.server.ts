// The guards every loader, action and resource route calls. Pages redirect to sign-in;
// API routes answer JSON 401/403, never an HTML redirect.
import { redirect } from "react-router";
import type { Role } from "~/db/schema";
import { userFromCookie, type SessionUser } from "./session.server";
import { userFromBearer } from "./tokens.server";

export type { SessionUser };

export async function getOptionalUser(request: Request): Promise<SessionUser | null> {
  return (await userFromBearer(request)) ?? (await userFromCookie(request));
}

function signInRedirect(request: Request) {
  const url = new URL(request.url);
  const back = url.pathname + url.search;
  return redirect(`/login?redirectTo=${encodeURIComponent(back)}`);
}

export async function requireUser(request: Request): Promise<SessionUser> {
  const user = await getOptionalUser(request);
  if (!user) throw signInRedirect(request);
  return user;
}

export async function requireRole(request: Request, roles: readonly Role[]): Promise<SessionUser> {
  const user = await requireUser(request);
  if (!roles.includes(user.role)) {
    throw new Response("Your role may not open this page.", { status: 403, statusText: "Forbidden" });
  }
  return user;
}

export async function requireApiUser(request: Request, roles?: readonly Role[]): Promise<SessionUser> {
  const user = await getOptionalUser(request);
  if (!user) throw Response.json({ error: "Not signed in: send a session cookie or an Authorization: Bearer token." }, { status: 401 });
  if (roles && !roles.includes(user.role)) {
    throw Response.json({ error: `The ${user.role} role may not do this.` }, { status: 403 });
  }
  return user;
}
