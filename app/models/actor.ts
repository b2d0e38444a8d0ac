// Who is asking. Every model function that reads or writes on someone's behalf takes an Actor;
// the route passes the signed-in user (or the API token's user) straight through.
import type { Role } from "~/db/schema";

export type Actor = { id: string; role: Role; name?: string; email?: string };
