// The role × route matrix, in one place. Each route file (as named in app/routes.ts) lists,
// per HTTP method it answers, the roles allowed, or "public". Loaders and actions enforce it
// with the guards; tests/integration/access-matrix.test.ts walks app/routes.ts and checks
// that every route is listed here and that each role gets exactly its allowed answer.
import type { Role } from "~/db/schema";

export type Allowed = readonly Role[] | "public";
export type MethodAccess = Partial<Record<"GET" | "POST" | "PUT" | "PATCH" | "DELETE", Allowed>>;

export const ALL: readonly Role[] = ["admin", "qa", "crew", "viewer"];
export const FIELD: readonly Role[] = ["admin", "qa", "crew"];
export const REVIEWERS: readonly Role[] = ["admin", "qa"];
export const ADMIN: readonly Role[] = ["admin"];

export const ACCESS: Record<string, MethodAccess> = {
  // ---- foundation ----
  "routes/healthz.ts": { GET: "public" },
  "routes/theme.ts": { GET: "public", POST: "public" },
  "routes/shell.tsx": { GET: "public" },
  "routes/home.tsx": { GET: "public" },
  "routes/not-found.tsx": { GET: "public" },

  // ---- sign-in and users (auth) ----

  // ---- registry (admin) ----

  // ---- sync and reports (API) ----

  // ---- review (qa) ----

  // ---- field (crew) ----
};
