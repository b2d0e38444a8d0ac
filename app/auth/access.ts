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
  // Sign-in pages are public (a signed-in person is sent on); /dev/mail is public but 404
  // unless NODE_ENV=development or DEV_MAIL_VIEWER=true. Users and tokens: admin only.
  "routes/login.tsx": { GET: "public", POST: "public" },
  "routes/login.code.tsx": { GET: "public", POST: "public" },
  "routes/auth.magic.tsx": { GET: "public" },
  "routes/logout.ts": { GET: "public", POST: "public" },
  "routes/dev.mail.tsx": { GET: "public" },
  "routes/admin.tsx": { GET: ADMIN },
  "routes/admin.users.tsx": { GET: ADMIN, POST: ADMIN },
  "routes/admin.users.$userId.tsx": { GET: ADMIN, POST: ADMIN },
  "routes/admin.tokens.tsx": { GET: ADMIN, POST: ADMIN },
  "routes/api.me.ts": { GET: ALL },

  // ---- registry (admin) ----
  // Every role may read the sensor and site lists (crews pick from them); changes are admin only.
  "routes/admin.sensors.tsx": { GET: ALL },
  "routes/admin.sensors.new.tsx": { GET: ADMIN, POST: ADMIN },
  "routes/admin.sensors.$sensorId.tsx": { GET: ADMIN, POST: ADMIN },
  // issue 14: tapes and reference EDMs read like sensors, each user its projects' ones (404 outside)
  "routes/admin.tapes.tsx": { GET: ALL },
  "routes/admin.tapes.new.tsx": { GET: ADMIN, POST: ADMIN },
  "routes/admin.tapes.$tapeId.tsx": { GET: ALL, POST: ADMIN },
  "routes/admin.sites.tsx": { GET: ALL },
  "routes/admin.sites.new.tsx": { GET: ADMIN, POST: ADMIN },
  "routes/admin.sites.$siteId.tsx": { GET: ADMIN, POST: ADMIN },
  "routes/admin.projects.tsx": { GET: ADMIN },
  "routes/admin.projects.new.tsx": { GET: ADMIN, POST: ADMIN },
  "routes/admin.projects.$projectId.tsx": { GET: ADMIN, POST: ADMIN },
  // api.sensors.ts: POST is the registry's; its GET (any signed-in role) is the sync/report loader.
  "routes/api.sensors.ts": { GET: ALL, POST: ADMIN },
  "routes/api.tapes.ts": { GET: ALL, POST: ADMIN },
  "routes/api.sites.ts": { POST: ADMIN },

  // ---- sync and reports (API) ----
  // Field roles sync and upload photos; every signed-in role reads; QA and admin exclude shots.
  // (GET of routes/api.sensors.ts, listed with the registry above, is this area's loader.)
  "routes/api.sync.ts": { POST: FIELD },
  "routes/api.sensors.$sensorId.report.ts": { GET: ALL },
  "routes/api.sensors.$sensorId.report[.]csv.ts": { GET: ALL },
  "routes/api.shots.ts": { GET: ALL },
  "routes/api.shots[.]geojson.ts": { GET: ALL },
  "routes/api.shots.$shotId.exclusion.ts": { POST: REVIEWERS, DELETE: REVIEWERS },
  "routes/api.photos.ts": { GET: ALL, POST: FIELD },
  "routes/api.photos.$photoId.ts": { GET: ALL },

  // ---- review (qa) ----
  // Every role reads reports (viewer read-only); only QA and admin sign off. Import: field roles.
  "routes/review.tsx": { GET: ALL },
  "routes/review.import.tsx": { GET: FIELD },
  "routes/review.import.chunk.tsx": { POST: FIELD },
  "routes/review.sensors.$sensorId.tsx": { GET: ALL, POST: REVIEWERS },
  "routes/review.sensors.$sensorId.map.tsx": { GET: ALL },
  "routes/review.sensors.$sensorId.print.tsx": { GET: ALL },

  // ---- field (crew) ----
  // The layout's loader guards every /field page; the child screens read IndexedDB only.
  "routes/field.tsx": { GET: FIELD },
  "routes/field._index.tsx": { GET: FIELD },
  "routes/field.session.tsx": { GET: FIELD },
  "routes/field.coverage.tsx": { GET: FIELD },
  "routes/field.shot.tsx": { GET: FIELD },
  "routes/field.session-fix.tsx": { GET: FIELD },
  "routes/field.outbox.tsx": { GET: FIELD },
  "routes/api.field.reference.ts": { GET: FIELD },

  // ---- issue 15: reference EDMs (admin) and a sensor's history (every role reads) ----
  "routes/admin.edms.tsx": { GET: ALL },
  "routes/admin.edms.new.tsx": { GET: ADMIN, POST: ADMIN },
  "routes/admin.edms.$edmId.tsx": { GET: ALL, POST: ADMIN },
  "routes/api.edms.ts": { GET: ALL, POST: ADMIN },
  "routes/review.sensors.$sensorId.history.tsx": { GET: ALL },
  // ---- check-shots from scans and depth frames (issue 18) ----
  // Field roles import (crew at the van, QA in the office); the shots go through the sync ingest.
  "routes/api.scans.ts": { POST: FIELD },
  "routes/api.frames.ts": { POST: FIELD },
  "routes/review.scans.tsx": { GET: FIELD },
  "routes/review.frames.tsx": { GET: FIELD },
  // ---- issue 14: the project verification report ----
  // Every role reads it; the models answer 404 unless the reader is a member of the project (or admin).
  "routes/review.projects.$projectId.report.tsx": { GET: ALL },
  "routes/api.projects.$projectId.report.ts": { GET: ALL },
  "routes/api.projects.$projectId.bundle[.]zip.ts": { GET: ALL },
  "routes/api.projects.$projectId.shots[.]geojson.ts": { GET: ALL },
  // ---- issue 14: projects with their members from a script (admin) ----
  "routes/api.projects.ts": { POST: ADMIN },
  // ---- issue 16: the report page's chart series (every role reads reports; scoped in the model) ----
  "routes/api.sensors.$sensorId.report.series.ts": { GET: ALL },
};
