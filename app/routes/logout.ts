import { redirect } from "react-router";
import type { Route } from "./+types/logout";
import { destroyAuthSession } from "~/auth/session.server";
import { readFormCapped } from "~/http/body.server";

// Public: signing out needs no role; it revokes this browser's server-side session row.
export async function action({ request }: Route.ActionArgs) {
  await readFormCapped(request); // nothing to read, but a body is never taken in uncapped
  return redirect("/", { headers: { "Set-Cookie": await destroyAuthSession(request) } });
}

// A plain GET never signs out (a link preview must not end a session).
export async function loader() {
  return redirect("/");
}
