// issue 14 (p14): tapes and reference EDMs belong to the projects that list them. Through the
// real loaders and actions against the per-file database: the tablet's reference data, GET
// /api/tapes and /api/edms, the registry pages (404 outside, exactly as an unknown id), the sync
// refusing a shot that names another project's tape or EDM (its batch-mates stored), POST
// /api/projects with tapeIds/edmIds (201/200/400/409), the project form's boxes (audited), the
// once-only migrate-time backfill, and sync answers that never confirm another project's ids.
import { beforeAll, expect, test } from "vitest";
import { and, eq, inArray } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { auditLog, projectEdms, projectTapes, shots } from "~/db/schema";
import { createEdm } from "~/models/edms.server";
import { ingestSync } from "~/models/sync.server";
import { backfillProjectTapesEdms, BACKFILL_PROJECT_TAPES_ACTION } from "~/models/tapes.server";
import { action as syncAction } from "~/routes/api.sync";
import { action as projectsAction } from "~/routes/api.projects";
import { loader as referenceLoader } from "~/routes/api.field.reference";
import { loader as tapesApi } from "~/routes/api.tapes";
import { loader as edmsApi } from "~/routes/api.edms";
import * as tapeList from "~/routes/admin.tapes";
import * as tapePage from "~/routes/admin.tapes.$tapeId";
import * as edmPage from "~/routes/admin.edms.$edmId";
import * as projectEdit from "~/routes/admin.projects.$projectId";
import { answerOf } from "./auth-helpers";
import { apiRequest, call, makeProject, makeSensor, makeSite, makeTape, makeUser, type TestUser } from "../support/registry-fixtures";
import { syncSession } from "../support/sync-records";

const uid = () => crypto.randomUUID();
let admin: TestUser, crewA: TestUser, viewerA: TestUser, loner: TestUser;
let sensorA: { id: string }, siteA: { id: string }, sensorB: { id: string }, siteB: { id: string };
let tapeA: { id: string }, tapeB: { id: string }, tapeShared: { id: string }, tapeLoose: { id: string };
let edmA: string, edmB: string;
let pA: { id: string; name: string }, pB: { id: string; name: string };

async function edm(label: string, serial: string) {
  const r = await createEdm(null, { label, serial, uncertaintyMm: 1, uncertaintyPpm: 1 });
  expect(r.status).toBe(201);
  return (r.body as { id: string }).id;
}

beforeAll(async () => {
  [admin, crewA, viewerA, loner] = await Promise.all([makeUser("admin"), makeUser("crew"), makeUser("viewer"), makeUser("crew")]);
  sensorA = await makeSensor({ label: "Harbour roof scanner", appliesAirCorrection: true });
  siteA = await makeSite({ name: "Harbour yard baseline" });
  sensorB = await makeSensor({ label: "Valley tripod scanner", appliesAirCorrection: true });
  siteB = await makeSite({ name: "Valley test range" });
  tapeA = await makeTape({ label: "Steel tape 30 m (harbour)" });
  tapeB = await makeTape({ label: "Steel tape 50 m (valley)" });
  tapeShared = await makeTape({ label: "Steel tape 20 m (both)" });
  tapeLoose = await makeTape({ label: "Steel tape 10 m (no project)" });
  edmA = await edm("Total station TS-A", "TSA-1");
  edmB = await edm("Total station TS-B", "TSB-1");
  pA = await makeProject({ name: "Harbour wall", sensorIds: [sensorA.id], siteIds: [siteA.id], tapeIds: [tapeA.id, tapeShared.id], edmIds: [edmA], memberIds: [crewA.id, viewerA.id] });
  pB = await makeProject({ name: "Valley road", sensorIds: [sensorB.id], siteIds: [siteB.id], tapeIds: [tapeB.id, tapeShared.id], edmIds: [edmB], memberIds: [] });
});

const ids = (xs: { id: string }[]) => xs.map((x) => x.id).sort();
const sorted = (...xs: string[]) => [...xs].sort();
const session = syncSession;
const tapeRef = (tapeId: string) => ({ method: "tape", distanceM: 20, tape: { tapeId, tempC: 20, tensionN: 50, support: "ground", spans: 1 } });
const shot = (sessionId: string, reference: Record<string, unknown>, over: Record<string, unknown> = {}) => ({
  id: uid(),
  sessionId,
  takenAt: "2026-05-04T08:10:00+02:00",
  reference,
  readings: { rangesM: [20.001] },
  reflectancePct: 50,
  illuminanceKlux: 20,
  ...over,
});
type Result = { kind: string; id: string; status: string; errors?: { path: string; message: string }[] };
async function sync(user: TestUser, body: unknown): Promise<Result[]> {
  const r = await call(syncAction as never, apiRequest("/api/sync", { user, json: body }));
  expect(r.status).toBe(200);
  return r.json.results;
}

test("a crew member of project A gets only A's tapes and EDMs in the reference data, each project saying which it lists", async () => {
  const r = await call(referenceLoader as never, apiRequest("/api/field/reference", { user: crewA }));
  expect(r.status).toBe(200);
  expect(ids(r.json.tapes)).toEqual(sorted(tapeA.id, tapeShared.id));
  expect(ids(r.json.edms)).toEqual([edmA]);
  expect(r.json.projects).toHaveLength(1);
  expect(r.json.projects[0].tapeIds.sort()).toEqual(sorted(tapeA.id, tapeShared.id));
  expect(r.json.projects[0].edmIds).toEqual([edmA]);
  // a crew member of no project gets none; an admin gets every live one
  const none = await call(referenceLoader as never, apiRequest("/api/field/reference", { user: loner }));
  expect(none.json.tapes).toEqual([]);
  expect(none.json.edms).toEqual([]);
  const all = await call(referenceLoader as never, apiRequest("/api/field/reference", { user: admin }));
  expect(ids(all.json.tapes)).toEqual(expect.arrayContaining([tapeA.id, tapeB.id, tapeShared.id, tapeLoose.id]));
  expect(ids(all.json.edms)).toEqual(expect.arrayContaining([edmA, edmB]));
});

test("GET /api/tapes and /api/edms: a member sees their projects' ones; another project answers 404 exactly like an unknown one", async () => {
  const t = await call(tapesApi as never, apiRequest("/api/tapes", { user: crewA }));
  expect(t.status).toBe(200);
  expect(ids(t.json.tapes)).toEqual(sorted(tapeA.id, tapeShared.id));
  // only the member's own projects are named, never B (which also lists the shared tape)
  expect(t.json.tapes.find((x: { id: string }) => x.id === tapeShared.id).projectIds).toEqual([pA.id]);
  const e = await call(edmsApi as never, apiRequest("/api/edms", { user: viewerA }));
  expect(ids(e.json.edms)).toEqual([edmA]);
  const mine = await call(tapesApi as never, apiRequest(`/api/tapes?project=${pA.id}`, { user: crewA }));
  expect(ids(mine.json.tapes)).toEqual(sorted(tapeA.id, tapeShared.id));
  const theirs = await call(tapesApi as never, apiRequest(`/api/tapes?project=${pB.id}`, { user: crewA }));
  const unknown = await call(tapesApi as never, apiRequest(`/api/tapes?project=no-such-project`, { user: crewA }));
  expect(theirs.status).toBe(404);
  expect(theirs.text.replace(pB.id, "{id}")).toBe(unknown.text.replace("no-such-project", "{id}"));
  // the admin sees every tape, B's with B named
  const all = await call(tapesApi as never, apiRequest("/api/tapes", { user: admin }));
  expect(all.json.tapes.find((x: { id: string }) => x.id === tapeB.id).projectIds).toEqual([pB.id]);
  expect(ids(all.json.tapes)).toEqual(expect.arrayContaining([tapeLoose.id]));
  expect((await call(tapesApi as never, apiRequest("/api/tapes"))).status).toBe(401);
});

test("the registry pages: a member reads their projects' tapes and EDMs (no edit form); another project's answers as an unknown id", async () => {
  const get = (mod: { loader: unknown }, path: string, params: Record<string, string>, user: TestUser) =>
    answerOf(() =>
      (mod.loader as (a: never) => Promise<unknown>)({ request: new Request(`http://localhost${path}`, { headers: { Authorization: `Bearer ${user.token}` } }), params, context: {} } as never),
    );
  const list = await get(tapeList, "/admin/tapes", {}, viewerA);
  expect(list.status).toBe(200);
  expect(list.body).toMatchObject({ canEdit: false });
  expect(ids((list.body as { tapes: { id: string }[] }).tapes)).toEqual(sorted(tapeA.id, tapeShared.id));
  const mine = await get(tapePage, `/admin/tapes/${tapeA.id}`, { tapeId: tapeA.id }, viewerA);
  expect(mine.status).toBe(200);
  expect(mine.body).toMatchObject({ canEdit: false, history: [], tape: { id: tapeA.id, projects: [{ id: pA.id, name: "Harbour wall" }] } });
  for (const [mod, key, theirs, path] of [
    [tapePage, "tapeId", tapeB.id, "/admin/tapes/"],
    [tapePage, "tapeId", tapeLoose.id, "/admin/tapes/"],
    [edmPage, "edmId", edmB, "/admin/edms/"],
  ] as const) {
    const t = await get(mod, path + theirs, { [key]: theirs }, viewerA);
    const u = await get(mod, path + "made-up-id", { [key]: "made-up-id" }, viewerA);
    expect(t.status, path + theirs).toBe(404);
    expect(JSON.stringify(t.body).split(theirs).join("{id}")).toBe(JSON.stringify(u.body).split("made-up-id").join("{id}"));
  }
  expect((await get(edmPage, `/admin/edms/${edmA}`, { edmId: edmA }, viewerA)).status).toBe(200);
  // the admin still gets the edit page of any tape
  expect((await get(tapePage, `/admin/tapes/${tapeLoose.id}`, { tapeId: tapeLoose.id }, admin)).body).toMatchObject({ canEdit: true });
});

test("a shot naming a tape or EDM its session's project does not list is refused on that path; its batch-mates are stored", async () => {
  const s = session(sensorA.id, siteA.id);
  const good = [shot(s.id, tapeRef(tapeA.id)), shot(s.id, tapeRef(tapeShared.id)), shot(s.id, { method: "edm", distanceM: 20, edmId: edmA })];
  const withB = shot(s.id, tapeRef(tapeB.id));
  const withUnknown = shot(s.id, tapeRef("no-such-tape"));
  const withEdmB = shot(s.id, { method: "edm", distanceM: 20, edmId: edmB });
  const r = await sync(crewA, { deviceId: "harbour-tablet", sessions: [s], shots: [good[0], withB, good[1], withEdmB, withUnknown, good[2]] });
  expect(r.map((x) => x.status)).toEqual(["accepted", "accepted", "rejected", "accepted", "rejected", "rejected", "accepted"]);
  const [tB, eB, unk] = [r[2]!, r[4]!, r[5]!];
  expect(tB.errors).toEqual([{ path: "reference.tape.tapeId", message: expect.stringMatching(/not one of the tapes of this session's project/) }]);
  expect(eB.errors).toEqual([{ path: "reference.edmId", message: expect.stringMatching(/not one of the reference EDMs of this session's project/) }]);
  // an unknown tape and another project's answer in the same words: the refusal confirms no id
  expect(tB.errors![0]!.message.replace(tapeB.id, "{id}")).toBe(unk.errors![0]!.message.replace("no-such-tape", "{id}"));
  expect(JSON.stringify(r)).not.toContain("Valley");
  const stored = await getDb()
    .select({ id: shots.id })
    .from(shots)
    .where(
      inArray(
        shots.id,
        [...good, withB, withEdmB, withUnknown].map((x) => x.id),
      ),
    );
  expect(ids(stored)).toEqual(sorted(...good.map((x) => x.id)));
});

test("POST /api/projects with tapeIds and edmIds: 201, 200 again, 400 on the path of an unknown id, 409 for other links; leaving them out keeps the old answers", async () => {
  const post = (json: unknown) => call(projectsAction as never, apiRequest("/api/projects", { user: admin, method: "POST", json }));
  const id = `harbour-annex-${uid().slice(0, 6)}`;
  const body = { id, name: "Harbour annex", sensorIds: [sensorA.id], siteIds: [siteA.id], tapeIds: [tapeA.id, tapeA.id], edmIds: [edmA] };
  const a = await post(body);
  expect(a.status).toBe(201);
  const links = async () => ({
    tapes: (await getDb().select({ id: projectTapes.tapeId }).from(projectTapes).where(eq(projectTapes.projectId, id))).map((x) => x.id),
    edms: (await getDb().select({ id: projectEdms.edmId }).from(projectEdms).where(eq(projectEdms.projectId, id))).map((x) => x.id),
  });
  expect(await links()).toEqual({ tapes: [tapeA.id], edms: [edmA] });
  const [audit] = await getDb()
    .select()
    .from(auditLog)
    .where(and(eq(auditLog.entity, "project"), eq(auditLog.entityId, id), eq(auditLog.action, "create")));
  expect(audit!.detail).toMatchObject({ tapeIds: [tapeA.id], edmIds: [edmA] });
  expect((await post(body)).status).toBe(200);
  // older clients send no tapeIds/edmIds: the same project again is still 200
  const { tapeIds: _t, edmIds: _e, ...older } = body;
  expect((await post(older)).status).toBe(200);
  const other = await post({ ...body, tapeIds: [tapeB.id] });
  expect(other.status).toBe(409);
  expect((await post({ ...body, edmIds: [] })).status).toBe(409);
  expect(await links()).toEqual({ tapes: [tapeA.id], edms: [edmA] });
  const bad = await post({ ...body, id: `${id}-x`, tapeIds: [tapeA.id, "no-such-tape"], edmIds: ["no-such-edm"] });
  expect(bad.status).toBe(400);
  expect(bad.json.errors).toEqual([
    { path: "tapeIds.1", message: 'No tape with id "no-such-tape"' },
    { path: "edmIds.0", message: 'No reference EDM with id "no-such-edm"' },
  ]);
  expect((await post({ ...body, id: `${id}-y`, tapeIds: "not a list" })).json.errors[0].path).toBe("tapeIds");
});

test("the project page adds and removes the project's tapes and EDMs, each change in the audit trail", async () => {
  const project = await makeProject({ name: "Quarry face", sensorIds: [sensorB.id], siteIds: [siteB.id] });
  const fields = (extra: Record<string, string[]>) => {
    const fd = new FormData();
    const base: Record<string, string[]> = {
      name: ["Quarry face"],
      client: ["Fernhollow Geomatics"],
      minShots: ["20"],
      coverageK: ["2"],
      minWithinPct: ["95"],
      rangeBandEdgesM: ["0, 10, 30, 100"],
      sensorIds: [sensorB.id],
      siteIds: [siteB.id],
    };
    for (const [k, vs] of Object.entries({ ...base, ...extra })) for (const v of vs) fd.append(k, v);
    return fd;
  };
  const post = (fd: FormData) =>
    answerOf(() =>
      projectEdit.action({
        request: new Request(`http://localhost/admin/projects/${project.id}`, { method: "POST", headers: { Authorization: `Bearer ${admin.token}` }, body: fd }),
        params: { projectId: project.id },
        context: {},
      } as never),
    );
  expect((await post(fields({ tapeIds: [tapeB.id, tapeLoose.id], edmIds: [edmB] }))).status).toBe(302);
  const linked = async () => ({
    tapes: (await getDb().select({ id: projectTapes.tapeId }).from(projectTapes).where(eq(projectTapes.projectId, project.id))).map((x) => x.id).sort(),
    edms: (await getDb().select({ id: projectEdms.edmId }).from(projectEdms).where(eq(projectEdms.projectId, project.id))).map((x) => x.id),
  });
  expect(await linked()).toEqual({ tapes: sorted(tapeB.id, tapeLoose.id), edms: [edmB] });
  // no box ticked: none (the form always shows the boxes)
  expect((await post(fields({ tapeIds: [tapeB.id] }))).status).toBe(302);
  expect(await linked()).toEqual({ tapes: [tapeB.id], edms: [] });
  const rows = await getDb()
    .select()
    .from(auditLog)
    .where(and(eq(auditLog.entity, "project"), eq(auditLog.entityId, project.id), eq(auditLog.action, "update")));
  expect(rows).toHaveLength(2);
  expect(rows.map((r) => Object.keys(r.detail as object).sort())).toEqual([
    ["edmIds", "tapeIds"],
    ["edmIds", "tapeIds"],
  ]);
  // an unknown tape id from a tampered form: 400 at its box, the rest kept as typed
  const bad = await post(fields({ tapeIds: ["no-such-tape"] }));
  expect(bad.status).toBe(400);
  expect(JSON.stringify(bad.body)).toContain("No tape with id");
});

test("the migrate-time backfill links each tape and EDM to the projects whose sessions used it, once", async () => {
  const crew = await makeUser("crew");
  const sensor = await makeSensor({ label: "Backfill scanner", appliesAirCorrection: true });
  const site = await makeSite({ name: "Backfill yard" });
  const tape = await makeTape({ label: "Steel tape 30 m (old)" });
  const e = await edm("Distance meter D-old", "DOLD-1");
  const project = await makeProject({ name: "Old job", sensorIds: [sensor.id], siteIds: [site.id], tapeIds: [tape.id], edmIds: [e], memberIds: [crew.id] });
  const s = session(sensor.id, site.id);
  const r = await sync(crew, { deviceId: "old-tablet", sessions: [s], shots: [shot(s.id, tapeRef(tape.id)), shot(s.id, { method: "edm", distanceM: 20, edmId: e })] });
  expect(r.map((x) => x.status)).toEqual(["accepted", "accepted", "accepted"]);
  // as before migration 0008: no links at all, and the backfill not yet run
  await getDb().delete(projectTapes).where(eq(projectTapes.projectId, project.id));
  await getDb().delete(projectEdms).where(eq(projectEdms.projectId, project.id));
  await getDb().delete(auditLog).where(eq(auditLog.action, BACKFILL_PROJECT_TAPES_ACTION));
  const first = await backfillProjectTapesEdms(getDb());
  expect(first.ran).toBe(true);
  expect(first.tapes).toBeGreaterThanOrEqual(1);
  expect(first.edms).toBeGreaterThanOrEqual(1);
  const tapeLinks = await getDb().select().from(projectTapes).where(eq(projectTapes.projectId, project.id));
  const edmLinks = await getDb().select().from(projectEdms).where(eq(projectEdms.projectId, project.id));
  expect(tapeLinks.map((l) => l.tapeId)).toEqual([tape.id]);
  expect(edmLinks.map((l) => l.edmId)).toEqual([e]);
  // an admin's later removal is not undone by the next start
  await getDb().delete(projectTapes).where(eq(projectTapes.projectId, project.id));
  expect((await backfillProjectTapesEdms(getDb())).ran).toBe(false);
  expect(await getDb().select().from(projectTapes).where(eq(projectTapes.projectId, project.id))).toEqual([]);
});

test("sync answers never confirm an id of another project: a copy of its record is a conflict in the usual words, its session as unknown as a made-up one", async () => {
  // project B's records, synced by the admin (crewA is not a member of B)
  const sB = session(sensorB.id, siteB.id, { projectId: pB.id });
  const shotB = shot(sB.id, { method: "edm", distanceM: 20 });
  const byAdmin = await ingestSync({ id: admin.id, role: "admin" }, { deviceId: "valley-tablet", sessions: [sB], shots: [shotB] });
  expect((byAdmin.body as { results: Result[] }).results.map((x) => x.status)).toEqual(["accepted", "accepted"]);
  // crewA's own records, to compare with a conflict they are allowed to know of
  const sA = session(sensorA.id, siteA.id);
  const shotA = shot(sA.id, { method: "edm", distanceM: 20 });
  await sync(crewA, { deviceId: "harbour-tablet", sessions: [sA], shots: [shotA] });
  const ownConflict = await sync(crewA, { deviceId: "harbour-tablet", sessions: [{ ...sA, note: "changed" }], shots: [{ ...shotA, reflectancePct: 10 }] });
  expect(ownConflict.map((x) => x.status)).toEqual(["rejected", "rejected"]);

  // exact copies of B's records: "duplicate" would confirm their content, so a conflict, worded as crewA's own
  const copies = await sync(crewA, { deviceId: "harbour-tablet", sessions: [sB], shots: [shotB] });
  expect(copies.map((x) => x.status)).toEqual(["rejected", "rejected"]);
  expect(copies[0]!.errors).toEqual(ownConflict[0]!.errors);
  expect(copies[1]!.errors).toEqual([{ path: "id", message: ownConflict[1]!.errors![0]!.message }]);
  // a shot of crewA's naming B's session id answers exactly as one naming a made-up session id
  const made = uid();
  const toB = await sync(crewA, { deviceId: "harbour-tablet", sessions: [], shots: [shot(sB.id, { method: "edm", distanceM: 20 })] });
  const toMade = await sync(crewA, { deviceId: "harbour-tablet", sessions: [], shots: [shot(made, { method: "edm", distanceM: 20 })] });
  const mask = (rs: Result[], id: string) =>
    JSON.stringify(rs.map(({ id: _id, ...rest }) => rest))
      .split(id)
      .join("{session}");
  expect(mask(toB, sB.id)).toBe(mask(toMade, made));
  expect(JSON.stringify([copies, toB])).not.toMatch(/Valley|valley/);
  // nothing of crewA's reached B
  expect((await getDb().select().from(shots).where(eq(shots.sessionId, sB.id))).map((x) => x.id)).toEqual([shotB.id]);
});
