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

    // ---- review (qa) ----

    // ---- field (crew) ----
  ]),

  // ---- API resource routes ----
  ...prefix("api", [
    // auth
    route("me", "routes/api.me.ts"),
    // registry
    // sync and reports
    // field
  ]),

  route("*", "routes/not-found.tsx"),
] satisfies RouteConfig;
