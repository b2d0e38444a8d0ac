import { type RouteConfig, index, layout, prefix, route } from "@react-router/dev/routes";

// Every route is listed here; app/auth/access.ts says which roles may open each one,
// and tests/integration/access-matrix.test.ts walks this list so none can skip the check.
export default [
  // ---- foundation ----
  route("healthz", "routes/healthz.ts"),
  route("theme", "routes/theme.ts"),

  layout("routes/shell.tsx", [
    index("routes/home.tsx"),

    // ---- sign-in and users (auth) ----
    route("login", "routes/login.tsx"),
    route("login/code", "routes/login.code.tsx"),
    route("auth/magic", "routes/auth.magic.tsx"),
    route("logout", "routes/logout.ts"),
    route("dev/mail", "routes/dev.mail.tsx"),
    route("admin", "routes/admin.tsx"),
    route("admin/users", "routes/admin.users.tsx"),
    route("admin/users/:userId", "routes/admin.users.$userId.tsx"),
    route("admin/tokens", "routes/admin.tokens.tsx"),

    // ---- registry (admin) ----
    route("admin/sensors", "routes/admin.sensors.tsx"),
    route("admin/sensors/new", "routes/admin.sensors.new.tsx"),
    route("admin/sensors/:sensorId", "routes/admin.sensors.$sensorId.tsx"),
    route("admin/tapes", "routes/admin.tapes.tsx"),
    route("admin/tapes/new", "routes/admin.tapes.new.tsx"),
    route("admin/tapes/:tapeId", "routes/admin.tapes.$tapeId.tsx"),
    route("admin/sites", "routes/admin.sites.tsx"),
    route("admin/sites/new", "routes/admin.sites.new.tsx"),
    route("admin/sites/:siteId", "routes/admin.sites.$siteId.tsx"),
    route("admin/projects", "routes/admin.projects.tsx"),
    route("admin/projects/new", "routes/admin.projects.new.tsx"),
    route("admin/projects/:projectId", "routes/admin.projects.$projectId.tsx"),
    // issue 15: reference EDMs
    route("admin/edms", "routes/admin.edms.tsx"),
    route("admin/edms/new", "routes/admin.edms.new.tsx"),
    route("admin/edms/:edmId", "routes/admin.edms.$edmId.tsx"),

    // ---- review (qa) ----
    route("review", "routes/review.tsx"),
    route("review/import", "routes/review.import.tsx"),
    route("review/import/chunk", "routes/review.import.chunk.tsx"),
    route("review/sensors/:sensorId", "routes/review.sensors.$sensorId.tsx"),
    route("review/sensors/:sensorId/map", "routes/review.sensors.$sensorId.map.tsx"),
    route("review/sensors/:sensorId/print", "routes/review.sensors.$sensorId.print.tsx"),
    // issue 15: a sensor's history over months
    route("review/sensors/:sensorId/history", "routes/review.sensors.$sensorId.history.tsx"),
    // check-shots from scans and depth frames (issue 18)
    route("review/scans", "routes/review.scans.tsx"),
    route("review/frames", "routes/review.frames.tsx"),
    // issue 14: the project verification report
    route("review/projects/:projectId/report", "routes/review.projects.$projectId.report.tsx"),

    // ---- field (crew) ----
    route("field", "routes/field.tsx", [
      index("routes/field._index.tsx"),
      route("session/:sessionId", "routes/field.session.tsx"),
      route("session/:sessionId/coverage", "routes/field.coverage.tsx"),
      route("session/:sessionId/shot/:shotId", "routes/field.shot.tsx"),
      route("session/:sessionId/fix", "routes/field.session-fix.tsx"),
      route("outbox", "routes/field.outbox.tsx"),
    ]),
  ]),

  // ---- API resource routes ----
  ...prefix("api", [
    // auth
    route("me", "routes/api.me.ts"),
    // registry
    route("sensors", "routes/api.sensors.ts"), // POST here (registry); GET loader by sync and reports
    route("tapes", "routes/api.tapes.ts"),
    route("sites", "routes/api.sites.ts"),
    // sync and reports
    route("sync", "routes/api.sync.ts"),
    route("sensors/:sensorId/report", "routes/api.sensors.$sensorId.report.ts"),
    route("sensors/:sensorId/report.csv", "routes/api.sensors.$sensorId.report[.]csv.ts"),
    route("shots", "routes/api.shots.ts"),
    route("shots.geojson", "routes/api.shots[.]geojson.ts"),
    route("shots/:shotId/exclusion", "routes/api.shots.$shotId.exclusion.ts"),
    route("photos", "routes/api.photos.ts"),
    route("photos/:photoId", "routes/api.photos.$photoId.ts"),
    // field
    route("field/reference", "routes/api.field.reference.ts"),
    // issue 15: reference EDMs (registry)
    route("edms", "routes/api.edms.ts"),
    // check-shots from scans and depth frames (issue 18)
    route("scans", "routes/api.scans.ts"),
    route("frames", "routes/api.frames.ts"),
    // issue 14: the project verification report, its CSV bundle and GeoJSON
    route("projects/:projectId/report", "routes/api.projects.$projectId.report.ts"),
    route("projects/:projectId/bundle.zip", "routes/api.projects.$projectId.bundle[.]zip.ts"),
    route("projects/:projectId/shots.geojson", "routes/api.projects.$projectId.shots[.]geojson.ts"),
    // issue 14: projects with their members (registry)
    route("projects", "routes/api.projects.ts"),
    // issue 16: the report page's chart series and "why this verdict", drawn at any number of shots
    route("sensors/:sensorId/report/series", "routes/api.sensors.$sensorId.report.series.ts"),
  ]),

  route("*", "routes/not-found.tsx"),
] satisfies RouteConfig;
