// The role × route matrix, checked against the real route config: every route file in
// app/routes.ts must be listed in ACCESS, and for every route × method × role (and anonymous)
// the real loader/action answers exactly as ACCESS says. A new route cannot skip the check.
import { existsSync } from "node:fs";
import { resolve } from "node:path";
import { beforeAll, expect, test } from "vitest";
import routes from "~/routes";
import { ACCESS, type Allowed } from "~/auth/access";
import { createAuthSession } from "~/auth/session.server";
import { getDb } from "~/db/client.server";
import { ROLES, users, type Role } from "~/db/schema";
import { answerOf, args, type Answer } from "./auth-helpers";

type Entry = { file: string; path?: string; index?: boolean; children?: Entry[] };
/** A route with its full path and its layouts, nearest last. */
type Flat = { file: string; path: string; ancestors: string[] };

function walk(entries: readonly Entry[], parent = "", ancestors: string[] = []): Flat[] {
  return entries.flatMap((e) => {
    const path = e.path ? `${parent.replace(/\/$/, "")}/${e.path}` : parent || "/";
    return [{ file: e.file, path, ancestors }, ...walk(e.children ?? [], path, [...ancestors, e.file])];
  });
}

type Mod = { loader?: (a: never) => Promise<unknown>; action?: (a: never) => Promise<unknown>; default?: unknown };

async function load(file: string): Promise<Mod> {
  return (await import(/* @vite-ignore */ resolve(process.cwd(), "app", file))) as Mod;
}

const FLAT = walk(routes as unknown as Entry[]);
const MADE_UP_ID = "00000000-0000-4000-8000-000000000000";
const METHODS = ["GET", "POST", "PUT", "PATCH", "DELETE"] as const;
type Method = (typeof METHODS)[number];
type Who = Role | "anonymous";

function concrete(path: string) {
  const params: Record<string, string> = {};
  const url = path
    .split("/")
    .map((seg) => {
      if (seg === "*") return (params["*"] = "no-such-page");
      const m = seg.match(/^:(\w+)\??(.*)$/);
      if (!m) return seg;
      params[m[1]!] = MADE_UP_ID;
      return MADE_UP_ID + m[2];
    })
    .join("/");
  return { url: url || "/", params };
}

const userIds = new Map<Role, string>();

beforeAll(async () => {
  for (const role of ROLES) {
    const [row] = await getDb()
      .insert(users)
      .values({ email: `matrix-${role}@fernhollow.test`, name: `Matrix ${role}`, role })
      .returning({ id: users.id });
    userIds.set(role, row!.id);
  }
});

/** A fresh session per call: an allowed POST /logout must not sign the next case out. */
async function cookieFor(who: Who) {
  if (who === "anonymous") return null;
  const { cookie } = await createAuthSession({ id: userIds.get(who)!, role: who });
  return cookie.split(";")[0]!;
}

function requestFor(method: Method, url: string, api: boolean, cookie: string | null) {
  const headers = new Headers();
  if (cookie) headers.set("Cookie", cookie);
  let body: string | undefined;
  if (method !== "GET") {
    // An empty but well-formed body: allowed roles answer with a validation error at most.
    headers.set("Content-Type", api ? "application/json" : "application/x-www-form-urlencoded");
    body = api ? "{}" : "";
  }
  return new Request(`http://localhost${url}`, { method, headers, body });
}

function allows(allowed: Allowed, who: Who) {
  return allowed === "public" || (who !== "anonymous" && allowed.includes(who));
}

const WHO: Who[] = [...ROLES, "anonymous"];

test("every route file in app/routes.ts is listed in ACCESS, and ACCESS lists no route that is gone", () => {
  const files = new Set(FLAT.map((r) => r.file));
  const missing = [...files].filter((f) => !ACCESS[f]);
  expect(missing, "route files without an ACCESS entry (add them to app/auth/access.ts)").toEqual([]);
  const stale = Object.keys(ACCESS).filter((f) => !files.has(f));
  expect(stale, "ACCESS entries for files not in app/routes.ts").toEqual([]);
});

test("the matrix walks real routes, including the sign-in, admin and API ones", () => {
  const files = FLAT.map((r) => r.file);
  for (const f of ["routes/login.tsx", "routes/admin.users.tsx", "routes/api.me.ts", "routes/shell.tsx"]) expect(files).toContain(f);
});

for (const route of FLAT) {
  test(`${route.file} (${route.path}) answers each role exactly as ACCESS says`, async () => {
    const access = ACCESS[route.file];
    expect(access, `${route.file} is missing from ACCESS in app/auth/access.ts`).toBeTruthy();
    expect(existsSync(resolve(process.cwd(), "app", route.file)), `${route.file} is listed in app/routes.ts but does not exist`).toBe(true);
    const mod = await load(route.file);
    const resource = !mod.default;
    const api = route.path.startsWith("/api/");

    // Each handler the module has must be in the matrix, and each matrix entry must be enforced
    // by a handler. A page without a server loader (one that reads only the tablet's IndexedDB)
    // sends no server data of its own; its GET is then enforced by the nearest layout that has
    // a loader, which is called below with this page's URL and must answer as this page's entry.
    if (mod.loader) expect(access!.GET, `${route.file} has a loader but ACCESS has no GET`).toBeTruthy();
    let getLoader = mod.loader;
    if (!getLoader && access!.GET && access!.GET !== "public") {
      for (const a of [...route.ancestors].reverse()) {
        const parent = await load(a);
        if (parent.loader && ACCESS[a]?.GET && ACCESS[a]!.GET !== "public") {
          getLoader = parent.loader;
          break;
        }
      }
      expect(getLoader, `${route.file}: ACCESS restricts GET but neither it nor a layout above it has a loader`).toBeTruthy();
    }
    const writeMethods = METHODS.filter((m) => m !== "GET" && access![m]);
    if (mod.action) expect(writeMethods.length, `${route.file} has an action but ACCESS lists no POST/PUT/PATCH/DELETE`).toBeGreaterThan(0);
    for (const m of writeMethods) expect(mod.action, `${route.file}: ACCESS lists ${m} but there is no action`).toBeTruthy();

    const { url, params } = concrete(route.path);
    const problems: string[] = [];
    for (const method of METHODS) {
      const allowed = access![method];
      if (!allowed) continue;
      const fn = method === "GET" ? getLoader : mod.action;
      if (!fn) continue;
      for (const who of WHO) {
        const request = requestFor(method, url, api, await cookieFor(who));
        let a: Answer;
        try {
          a = await answerOf(() => fn(args(request, params)));
        } catch (e) {
          problems.push(`${method} ${url} as ${who}: threw ${e instanceof Error ? e.message : String(e)}`);
          continue;
        }
        const toLogin = a.status >= 300 && a.status < 400 && (a.location ?? "").startsWith("/login");
        const where = `${method} ${url} as ${who}: ${a.status}${a.location ? ` → ${a.location}` : ""}`;
        if (allows(allowed, who)) {
          // A public page may send someone to /login by its own logic (no code requested yet);
          // a role-restricted one doing so to an allowed role is a guard refusing them.
          const refused = a.status === 401 || a.status === 403 || (allowed !== "public" && toLogin);
          if (refused) problems.push(`${where}, but ACCESS allows ${who}`);
          else if (a.status >= 500) problems.push(`${where}: an allowed role got a server error`);
        } else if (resource || api) {
          const expected = who === "anonymous" ? 401 : 403;
          if (a.status !== expected) problems.push(`${where}, expected ${expected} JSON`);
          else if (typeof (a.body as { error?: unknown })?.error !== "string") problems.push(`${where}: the ${expected} is not JSON { error }`);
        } else if (who === "anonymous") {
          if (!(toLogin || a.status === 401)) problems.push(`${where}, expected a redirect to /login`);
        } else if (a.status !== 403) {
          problems.push(`${where}, expected 403`);
        }
      }
    }
    expect(problems).toEqual([]);
  });
}
