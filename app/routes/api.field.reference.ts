import type { Route } from "./+types/api.field.reference";
import { FIELD } from "~/auth/access";
import { requireApiUser } from "~/auth/guards.server";
import { fieldReference } from "~/models/field-reference.server";

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireApiUser(request, FIELD);
  return Response.json(await fieldReference(user), { headers: { "Cache-Control": "no-store" } });
}
