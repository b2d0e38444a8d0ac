// The role × route matrix, checked against the real route config: every route file in
// app/routes.ts must be listed in ACCESS, and for every route × method × role (and anonymous)
// the real loader/action answers exactly as ACCESS says. A new route cannot skip the check.
import { createHash } from "node:crypto";
import { existsSync, mkdtempSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join, resolve } from "node:path";
import { beforeAll, expect, test } from "vitest";
import routes from "~/routes";
import { ACCESS, type Allowed } from "~/auth/access";
import { createAuthSession } from "~/auth/session.server";
import { getDb } from "~/db/client.server";
import { edms, ROLES, users, type Role } from "~/db/schema";
import { answerOf, args, type Answer } from "./auth-helpers";
import { ingestSync } from "~/models/sync.server";
import { savePhoto } from "~/models/photos.server";
import { makeProject, makeSensor, makeSite, makeTape } from "../support/registry-fixtures";

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

// ---------------------------------------------------------------------------------------------
// issue 14: the membership dimension. The matrix users of qa, crew and viewer are members of
// project A only; project B holds the same kinds of records (sensor, site, session, shot,
// photo). For every route that takes a sensor, shot or photo id, and for every list filtered by
// a sensor, session, shot or project id, each role that ACCESS allows gets: with A's record an
// answer (not 404, 401, 403 or 5xx); with B's record — as a non-member — exactly the answer of
// an unknown id (same status, same body), a 404 for every read. The admin (no membership rows)
// gets B's records too.

type Kind = "sensor" | "shot" | "photo" | "session" | "project" | "tape" | "edm";
type Side = { sensor: string; site: string; session: string; shot: string; photo: string; project: string; tape: string; edm: string };
const sides: { A?: Side; B?: Side } = {};

async function sideWorld(name: string, memberIds: string[], admin: { id: string; role: Role }): Promise<Side> {
  const sensor = await makeSensor({ label: `Scanner of ${name}` });
  const site = await makeSite({ name: `Yard of ${name}` });
  // issue 14: each project's own tape and reference EDM (the registry pages answer 404 outside)
  const tape = await makeTape({ label: `Steel tape of ${name}` });
  const edm = crypto.randomUUID();
  await getDb()
    .insert(edms)
    .values({ id: edm, label: `Total station of ${name}`, serial: edm.slice(0, 8), uncertaintyMm: 1, uncertaintyPpm: 1 });
  const project = await makeProject({ name, sensorIds: [sensor.id], siteIds: [site.id], tapeIds: [tape.id], edmIds: [edm], memberIds });
  const session = crypto.randomUUID();
  const shot = crypto.randomUUID();
  const out = await ingestSync(admin, {
    deviceId: `matrix-${name}`,
    sessions: [{ id: session, sensorId: sensor.id, siteId: site.id, startedAt: "2026-05-04T08:00:00+02:00" }],
    shots: [
      {
        id: shot,
        sessionId: session,
        takenAt: "2026-05-04T08:10:00+02:00",
        reference: { method: "edm", distanceM: 20 },
        readings: { rangesM: [20.002] },
        reflectancePct: 50,
        illuminanceKlux: 20,
        position: { lat: 10, lon: -30, accuracyM: 3 },
      },
    ],
  });
  expect(JSON.stringify(out.body), JSON.stringify(out.body)).not.toContain("rejected");
  const dir = mkdtempSync(join(tmpdir(), "matrix-photo-"));
  const file = join(dir, "p.png");
  writeFileSync(file, PNG);
  const saved = await savePhoto(admin, shot, { path: file, bytes: PNG.length, sha256: createHash("sha256").update(PNG).digest("hex"), type: "image/png" });
  rmSync(dir, { recursive: true, force: true });
  const photo = (saved.body as { photo: { id: string } }).photo.id;
  return { sensor: sensor.id, site: site.id, session, shot, photo, project: project.id, tape: tape.id, edm };
}

const PNG = Buffer.from("iVBORw0KGgoAAAANSUhEUgAAAAIAAAACCAYAAABytg0kAAAAEklEQVR4AWIyXlX+H4SZGKAAAAAA///5ejD3AAAABklEQVQDADzYBKuqbfebAAAAAElFTkSuQmCC", "base64");

beforeAll(async () => {
  const admin = { id: userIds.get("admin")!, role: "admin" as const };
  const members = (["qa", "crew", "viewer"] as const).map((r) => userIds.get(r)!);
  sides.A = await sideWorld("Matrix project A", members, admin);
  sides.B = await sideWorld("Matrix project B", [], admin);
});

const PARAM_KIND: Record<string, Kind> = { sensorId: "sensor", shotId: "shot", photoId: "photo", tapeId: "tape", edmId: "edm" };

/** The cases: a route file, the URL with `{id}` where the record's id goes, and its kind. */
type Case = { file: string; url: string; kind: Kind; params: (id: string) => Record<string, string> };
const CASES: Case[] = [
  ...FLAT.flatMap((r): Case[] => {
    const segs = r.path.split("/");
    const named = segs.map((s) => s.match(/^:(\w+)/)?.[1]).filter((n): n is string => !!n);
    if (named.length !== 1 || !PARAM_KIND[named[0]!]) return [];
    const name = named[0]!;
    return [{ file: r.file, url: r.path.replace(`:${name}`, "{id}"), kind: PARAM_KIND[name]!, params: (id) => ({ [name]: id }) }];
  }),
  // lists filtered by an id (api.md v1.1: such an id, or an unknown one, answers 404)
  { file: "routes/api.shots.ts", url: "/api/shots?sensor={id}", kind: "sensor", params: () => ({}) },
  { file: "routes/api.shots.ts", url: "/api/shots?session={id}", kind: "session", params: () => ({}) },
  { file: "routes/api.shots.ts", url: "/api/shots?project={id}", kind: "project", params: () => ({}) },
  { file: "routes/api.shots[.]geojson.ts", url: "/api/shots.geojson?sensor={id}", kind: "sensor", params: () => ({}) },
  { file: "routes/api.shots[.]geojson.ts", url: "/api/shots.geojson?session={id}", kind: "session", params: () => ({}) },
  { file: "routes/api.photos.ts", url: "/api/photos?shotId={id}", kind: "shot", params: () => ({}) },
  { file: "routes/api.sensors.ts", url: "/api/sensors?project={id}", kind: "project", params: () => ({}) },
  { file: "routes/review.tsx", url: "/review?project={id}", kind: "project", params: () => ({}) },
  { file: "routes/api.tapes.ts", url: "/api/tapes?project={id}", kind: "project", params: () => ({}) },
  { file: "routes/api.edms.ts", url: "/api/edms?project={id}", kind: "project", params: () => ({}) },
];

test("the membership cases cover every object kind, including photos by id and the exports", () => {
  const files = new Set(CASES.map((c) => c.file));
  for (const f of [
    "routes/api.photos.$photoId.ts",
    "routes/api.sensors.$sensorId.report.ts",
    "routes/api.sensors.$sensorId.report[.]csv.ts",
    "routes/review.sensors.$sensorId.print.tsx",
    "routes/review.sensors.$sensorId.map.tsx",
    "routes/api.shots.$shotId.exclusion.ts",
    "routes/api.shots[.]geojson.ts",
    "routes/admin.tapes.$tapeId.tsx",
    "routes/admin.edms.$edmId.tsx",
  ]) {
    expect(files, `${f} has no membership case`).toContain(f);
  }
  expect(new Set(CASES.map((c) => c.kind))).toEqual(new Set(["sensor", "shot", "photo", "session", "project", "tape", "edm"]));
});

const masked = (a: Answer, id: string) => ({
  status: a.status,
  body: JSON.stringify(a.body ?? null)
    .split(id)
    .join("{id}"),
});

for (const c of CASES) {
  test(`${c.url} (${c.file}): a member gets their project's ${c.kind}; a non-member gets exactly the unknown id's answer`, async () => {
    const access = ACCESS[c.file]!;
    const mod = await load(c.file);
    const api = c.url.startsWith("/api/");
    const problems: string[] = [];
    for (const method of METHODS) {
      const allowed = access[method];
      const fn = method === "GET" ? mod.loader : mod.action;
      if (!allowed || allowed === "public" || !fn) continue;
      for (const role of allowed) {
        const ask = async (id: string) => {
          const url = c.url.replace("{id}", id);
          const request = requestFor(method, url, api, (await cookieFor(role))!);
          return answerOf(() => fn(args(request, c.params(id))));
        };
        const unknown = await ask(MADE_UP_ID);
        const mine = await ask(sides.A![c.kind]);
        const theirs = await ask(sides.B![c.kind]);
        const where = `${method} ${c.url} as ${role}`;
        if (mine.status === 404 || mine.status === 401 || mine.status === 403 || mine.status >= 500) problems.push(`${where} with a record of their project: ${mine.status}`);
        if (role === "admin") {
          if (theirs.status === 404 || theirs.status >= 500) problems.push(`${where}: the admin got ${theirs.status} for another project's record`);
          continue;
        }
        if (method === "GET" && unknown.status !== 404) problems.push(`${where} with an unknown id: ${unknown.status}, expected 404`);
        const t = masked(theirs, sides.B![c.kind]);
        const u = masked(unknown, MADE_UP_ID);
        if (t.status !== u.status || t.body !== u.body) problems.push(`${where} as a non-member: ${t.status} ${t.body.slice(0, 120)} — an unknown id gives ${u.status} ${u.body.slice(0, 120)}`);
      }
    }
    expect(problems).toEqual([]);
  });
}
