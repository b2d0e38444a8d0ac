// The site admin screens through their real loaders and actions (form posts as a browser without
// JavaScript sends them): create with stations and targets, a 400 at each bad row's field with the
// typed value kept, edit (a removed target is retired, not deleted), retire.
import { expect, test } from "vitest";
import { and, eq } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { auditLog, sites, stations, targets } from "~/db/schema";
import { createSite, getSiteGeometry } from "~/models/sites.server";
import * as siteList from "~/routes/admin.sites";
import * as siteNew from "~/routes/admin.sites.new";
import * as siteEdit from "~/routes/admin.sites.$siteId";
import { makeUser } from "../support/registry-fixtures";
import { uid, ok, form, req, run, type Fn, type Reply } from "../support/admin-forms";

const siteForm = (name: string, extra: Record<string, string> = {}) =>
  form({
    name,
    lat: "46.5123",
    lon: "7.4321",
    "stations[0].label": "S1",
    "stations[0].grid.e": "1000",
    "stations[0].grid.n": "2000",
    "stations[0].grid.h": "512.3",
    "targets[0].label": "T10-dark",
    "targets[0].reflectancePct": "10",
    "targets[0].referenceM": "10.002",
    "targets[1].label": "T30-white",
    "targets[1].reflectancePct": "85",
    "targets[1].retro": "on",
    "targets[1].geo.lat": "46.5127",
    "targets[1].geo.lon": "7.4325",
    "targets[1].geo.h": "560.2",
    ...extra,
  });

test("an admin creates a site with a station and two targets through the form", async () => {
  const admin = await makeUser("admin");
  const name = `Roadside range ${uid().slice(0, 6)}`;
  const a = await run(siteNew.action as Fn, req("/admin/sites/new", admin, siteForm(name)));
  expect(a.status).toBe(302);
  const [site] = await getDb().select().from(sites).where(eq(sites.name, name));
  const geo = await getSiteGeometry(site!.id);
  expect(geo).toMatchObject({
    name,
    lat: 46.5123,
    lon: 7.4321,
    stations: [{ label: "S1", grid: { e: 1000, n: 2000, h: 512.3 }, geo: null, retiredAt: null }],
    targets: [
      { label: "T10-dark", reflectancePct: 10, retro: false, referenceM: 10.002, grid: null, geo: null },
      { label: "T30-white", reflectancePct: 85, retro: true, referenceM: null, grid: null, geo: { lat: 46.5127, lon: 7.4325, h: 560.2 } },
    ],
  });
  const list = await run(siteList.loader as Fn, req("/admin/sites", admin));
  const mine = (list.body as { sites: { id: string; targetCount: number; stationCount: number; targetLabels: string }[] }).sites.find((s) => s.id === site!.id);
  expect(mine).toMatchObject({ targetCount: 2, stationCount: 1, targetLabels: "T10-dark, T30-white" });
});

test("bad values in a site's rows each get their message at the row's field, with the typed value kept", async () => {
  const admin = await makeUser("admin");
  const a = await run(
    siteNew.action as Fn,
    req("/admin/sites/new", admin, siteForm("Bad rows", { "targets[1].reflectancePct": "140", "targets[0].referenceM": "-3", "stations[0].grid.h": "", "targets[1].label": "t10-DARK" })),
  );
  expect(a.status).toBe(400);
  const { result } = a.body as Reply;
  expect(result.error["targets[1].reflectancePct"]).toEqual(["Reflectance lies between 0 and 100 %"]);
  expect(result.error["targets[0].referenceM"]).toEqual(["The reference distance must be above 0 m"]);
  expect(result.error["stations[0].grid.h"]).toEqual(["Enter the height (m)"]);
  expect(result.error["targets[1].label"]).toEqual(["Another row of this site has this label"]);
  const iv = result.initialValue as { targets: { reflectancePct: string; label: string }[] };
  expect(iv.targets[1]).toMatchObject({ reflectancePct: "140", label: "t10-DARK" });
  expect(await getDb().select().from(sites).where(eq(sites.name, "Bad rows"))).toEqual([]);
});

test("editing a site: a removed target is retired (not deleted), a new row is added, kept rows updated", async () => {
  const admin = await makeUser("admin");
  const created = await ok(
    createSite(null, {
      name: `Yard baseline ${uid().slice(0, 6)}`,
      stations: [{ label: "S1", grid: { e: 0, n: 0, h: 100 } }],
      targets: [
        { label: "T1", reflectancePct: 10, referenceM: 5 },
        { label: "T2", reflectancePct: 50, referenceM: 15 },
      ],
    }),
  );
  const siteId = created.body.id;
  const [t1, t2] = created.body.targets as { id: string; label: string }[];
  const [s1] = created.body.stations as { id: string }[];
  const fd = form({
    name: "Yard baseline (resurveyed)",
    "stations[0].id": s1!.id,
    "stations[0].label": "S1",
    "stations[0].grid.e": "0",
    "stations[0].grid.n": "0",
    "stations[0].grid.h": "100",
    "targets[0].id": t2!.id,
    "targets[0].label": "T2",
    "targets[0].reflectancePct": "50",
    "targets[0].referenceM": "15.004",
    "targets[1].label": "T3",
    "targets[1].reflectancePct": "85",
  });
  const a = await run(siteEdit.action as Fn, req(`/admin/sites/${siteId}`, admin, fd), { siteId });
  expect(a.status).toBe(302);
  const rows = await getDb().select().from(targets).where(eq(targets.siteId, siteId));
  expect(rows).toHaveLength(3);
  const byLabel = Object.fromEntries(rows.map((r) => [r.label, r]));
  expect(byLabel.T1!.id).toBe(t1!.id);
  expect(byLabel.T1!.retiredAt).not.toBeNull();
  expect(byLabel.T2!.referenceM).toBe(15.004);
  expect(byLabel.T2!.retiredAt).toBeNull();
  expect(byLabel.T3!.reflectancePct).toBe(85);
  expect((await getDb().select().from(stations).where(eq(stations.siteId, siteId)))[0]!.retiredAt).toBeNull();
  const [log] = await getDb()
    .select()
    .from(auditLog)
    .where(and(eq(auditLog.entity, "site"), eq(auditLog.entityId, siteId), eq(auditLog.action, "update")));
  expect(log!.detail).toMatchObject({ site: { name: { to: "Yard baseline (resurveyed)" } }, targets: { added: ["T3"], changed: ["T2"], retired: ["T1"] } });

  const retire = await run(siteEdit.action as Fn, req(`/admin/sites/${siteId}`, admin, form({ intent: "retire", confirm: "yes" })), { siteId });
  expect(retire.status).toBe(302);
  expect((await getDb().select().from(sites).where(eq(sites.id, siteId)))[0]!.retiredAt).not.toBeNull();
  expect(await getSiteGeometry(siteId)).not.toBeNull();
});
