// Registry rows for tests and benches, inserted directly through drizzle (no validation, no
// audit): users with a bearer token, sensors, tapes, sites with stations and targets,
// projects. Invented values in the manner of the demo scenario (brief.md).
import { getDb } from "~/db/client.server";
import { projectEdms, projectMembers, projectSensors, projectSites, projectTapes, projects, sensors, sites, stations, tapes, targets, users, type Role } from "~/db/schema";
import { inArray } from "drizzle-orm";
import { createApiToken } from "~/auth/tokens.server";

const uid = () => crypto.randomUUID();

export type TestUser = { id: string; role: Role; email: string; token: string };

/** A user of the role with a bearer token, so a Request can act as them. */
export async function makeUser(role: Role, email = `${role}-${uid().slice(0, 8)}@fixture.test`): Promise<TestUser> {
  const id = uid();
  await getDb()
    .insert(users)
    .values({ id, email, name: `Fixture ${role}`, role });
  const { token } = await createApiToken(id, "fixture");
  return { id, role, email, token };
}

export async function makeSensor(over: Partial<typeof sensors.$inferInsert> = {}) {
  const row = {
    id: uid(),
    label: "Roof scanner R1",
    serial: `FX-${uid().slice(0, 6)}`,
    kind: "pulsed" as const,
    wavelengthNm: 905,
    modulationHz: [],
    appliesAirCorrection: true,
    assumedRefractivity: 0,
    toleranceMm: 5,
    tolerancePpm: 10,
    outdoor: true,
    ...over,
  };
  await getDb().insert(sensors).values(row);
  return row;
}

export async function makeTape(over: Partial<typeof tapes.$inferInsert> = {}) {
  const row = {
    id: uid(),
    label: "Steel tape 30 m",
    standardTempC: 20,
    standardTensionN: 50,
    areaMm2: 2.6,
    modulusGPa: 200,
    weightNPerM: 0.2,
    calibrationPpm: 0,
    ...over,
  };
  await getDb().insert(tapes).values(row);
  return row;
}

type Place = { id?: string; label?: string; grid?: { e: number; n: number; h: number }; geo?: { lat: number; lon: number; h: number }; sigmaMm?: number | null };
type TargetIn = Place & { reflectancePct?: number; retro?: boolean; referenceM?: number };

export async function makeSite(opts: { name?: string; targets?: TargetIn[]; stations?: Place[] } = {}) {
  const db = getDb();
  const site = { id: uid(), name: opts.name ?? "Fernhollow yard baseline" };
  await db.insert(sites).values(site);
  const place = (p: Place) => ({
    gridE: p.grid?.e ?? null,
    gridN: p.grid?.n ?? null,
    gridH: p.grid?.h ?? null,
    lat: p.geo?.lat ?? null,
    lon: p.geo?.lon ?? null,
    h: p.geo?.h ?? null,
    sigmaMm: p.sigmaMm ?? null, // issue 15
  });
  const st = (opts.stations ?? []).map((s, i) => ({ id: s.id ?? uid(), siteId: site.id, label: s.label ?? `S${i + 1}`, ...place(s) }));
  const tg = (opts.targets ?? [{ reflectancePct: 10 }, { reflectancePct: 85 }]).map((t, i) => ({
    id: t.id ?? uid(),
    siteId: site.id,
    label: t.label ?? `T${i + 1}`,
    reflectancePct: t.reflectancePct ?? 50,
    retro: t.retro ?? false,
    referenceM: t.referenceM ?? null,
    ...place(t),
  }));
  if (st.length) await db.insert(stations).values(st);
  if (tg.length) await db.insert(targets).values(tg);
  return { ...site, stations: st, targets: tg };
}

export async function makeProject(
  opts: {
    sensorIds?: string[];
    siteIds?: string[];
    tapeIds?: string[];
    edmIds?: string[];
    memberIds?: string[];
    minShots?: number;
    coverageK?: number;
    minWithinPct?: number;
    name?: string;
  } & Partial<Pick<typeof projects.$inferInsert, "referenceRatio" | "referenceInVerdict" | "statement" | "edmUncertaintyMm" | "edmUncertaintyPpm">> = {},
) {
  const db = getDb();
  const row = {
    id: uid(),
    name: opts.name ?? "River valley corridor",
    client: "Fernhollow Geomatics",
    minShots: opts.minShots ?? 20,
    coverageK: opts.coverageK ?? 2,
    minWithinPct: opts.minWithinPct ?? 95,
    // issue 15: the rule's reference fields, when a test gives them
    ...(opts.referenceRatio !== undefined ? { referenceRatio: opts.referenceRatio } : {}),
    ...(opts.referenceInVerdict !== undefined ? { referenceInVerdict: opts.referenceInVerdict } : {}),
    ...(opts.statement !== undefined ? { statement: opts.statement } : {}),
    ...(opts.edmUncertaintyMm !== undefined ? { edmUncertaintyMm: opts.edmUncertaintyMm } : {}),
    ...(opts.edmUncertaintyPpm !== undefined ? { edmUncertaintyPpm: opts.edmUncertaintyPpm } : {}),
  };
  await db.insert(projects).values(row);
  for (const sensorId of opts.sensorIds ?? []) await db.insert(projectSensors).values({ projectId: row.id, sensorId });
  for (const siteId of opts.siteIds ?? []) await db.insert(projectSites).values({ projectId: row.id, siteId });
  // issue 14: the tapes and reference EDMs its crews may name on shots
  for (const tapeId of opts.tapeIds ?? []) await db.insert(projectTapes).values({ projectId: row.id, tapeId });
  for (const edmId of opts.edmIds ?? []) await db.insert(projectEdms).values({ projectId: row.id, edmId });
  // issue 14: members see the project's records (admins see every project without a row)
  for (const userId of opts.memberIds ?? []) await db.insert(projectMembers).values({ projectId: row.id, userId });
  return row;
}

/** Makes these users (by e-mail) members of the project (issue 14): their scope then holds it. */
export async function addMembers(projectId: string, emails: string[]) {
  const db = getDb();
  const rows = emails.length ? await db.select({ id: users.id }).from(users).where(inArray(users.email, emails)) : [];
  for (const r of rows) await db.insert(projectMembers).values({ projectId, userId: r.id }).onConflictDoNothing();
  return rows.length;
}

/**
 * issue 14: the project a test world works in — it lists the sensors and sites (so a session
 * of them implies it) and the users are its members (so they see its records). The rule is the
 * default of ranging.md §6 unless given.
 */
export function shareProject(sensors: { id: string }[], sites: { id: string }[], members: { id: string }[], opts: Parameters<typeof makeProject>[0] = {}) {
  return makeProject({ name: "Fixture workspace", ...opts, sensorIds: sensors.map((s) => s.id), siteIds: sites.map((s) => s.id), memberIds: members.map((u) => u.id) });
}

/** issue 14: makes users members of an existing project. */
export async function addMemberUsers(projectId: string, members: { id: string }[]) {
  for (const u of members) await getDb().insert(projectMembers).values({ projectId, userId: u.id }).onConflictDoNothing();
}

/** A Request as a user (bearer token), JSON body when given. */
export function apiRequest(path: string, opts: { user?: TestUser; method?: string; json?: unknown; body?: BodyInit; headers?: Record<string, string> } = {}) {
  const headers: Record<string, string> = { ...opts.headers };
  if (opts.user) headers.Authorization = `Bearer ${opts.user.token}`;
  let body = opts.body;
  if (opts.json !== undefined) {
    headers["Content-Type"] = "application/json";
    body = JSON.stringify(opts.json);
  }
  return new Request(`http://localhost${path}`, { method: opts.method ?? (body ? "POST" : "GET"), headers, body });
}

/** Calls a loader/action and returns status and JSON (thrown Responses included). */
export async function call(fn: (args: never) => unknown, request: Request, params: Record<string, string> = {}) {
  let res: unknown;
  try {
    res = await fn({ request, params, context: {} } as never);
  } catch (e) {
    if (!(e instanceof Response)) throw e;
    res = e;
  }
  const r = res as Response;
  const text = await r.text();
  let json: unknown = null;
  try {
    json = JSON.parse(text);
  } catch {}
  // the tests read an answer's JSON by path and assert its shape themselves
  // eslint-disable-next-line @typescript-eslint/no-explicit-any
  return { status: r.status, headers: r.headers, text, json: json as any };
}

/** issue 16: makes users members of a project (api.md v1.1 scoping: non-admins see their projects' records only). */
export async function addMemberIds(projectId: string, ...userIds: string[]) {
  for (const userId of userIds) await getDb().insert(projectMembers).values({ projectId, userId }).onConflictDoNothing();
}
