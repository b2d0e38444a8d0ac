import type { Route } from "./+types/api.me";
import { ALL } from "~/auth/access";
import { requireApiUser } from "~/auth/guards.server";

// Any signed-in role: lets a script check which user (and role) its token acts as.
export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireApiUser(request, ALL);
  return Response.json({ id: user.id, email: user.email, name: user.name, role: user.role }, { headers: { "Cache-Control": "no-store" } });
}
