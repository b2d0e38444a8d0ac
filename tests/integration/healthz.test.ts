import { expect, test } from "vitest";
import { loader } from "~/routes/healthz";

test("healthz answers 200 ok after SELECT 1 on the per-worker database", async () => {
  const res = await loader();
  expect(res.status).toBe(200);
  expect(await res.json()).toEqual({ ok: true });
});

test("the migrated schema has the tables every part relies on", async () => {
  const { getDb } = await import("~/db/client.server");
  const rs = await getDb().$client.execute("SELECT name FROM sqlite_master WHERE type='table' ORDER BY name");
  const names = rs.rows.map((r) => String(r.name));
  for (const t of [
    "users",
    "auth_sessions",
    "login_codes",
    "rate_limits",
    "api_tokens",
    "projects",
    "sensors",
    "tapes",
    "sites",
    "stations",
    "targets",
    "check_sessions",
    "shots",
    "exclusions",
    "sign_offs",
    "audit_log",
    "photos",
    "mail_log",
  ]) {
    expect(names).toContain(t);
  }
});
