// The tape admin screens through their real loaders and actions (form posts as a browser without
// JavaScript sends them): create, a 400 per bad field with the typed values kept, edit, retire.
import { expect, test } from "vitest";
import { eq } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { tapes } from "~/db/schema";
import { getTapeSpec } from "~/models/tapes.server";
import * as tapeNew from "~/routes/admin.tapes.new";
import * as tapeEdit from "~/routes/admin.tapes.$tapeId";
import * as tapeList from "~/routes/admin.tapes";
import { makeUser } from "../support/registry-fixtures";
import { uid, form, req, run, type Fn, type Reply } from "../support/admin-forms";

test("tapes: create, a 400 per bad field with typed values kept, edit, retire", async () => {
  const admin = await makeUser("admin");
  const label = `Steel tape 30 m ${uid().slice(0, 6)}`;
  const good = { label, standardTempC: "20", standardTensionN: "50", areaMm2: "2.6", modulusGPa: "200", weightNPerM: "0.2", calibrationPpm: "15" };
  const bad = await run(tapeNew.action as Fn, req("/admin/tapes/new", admin, form({ ...good, standardTensionN: "0", areaMm2: "", weightNPerM: "heavy" })));
  expect(bad.status).toBe(400);
  const { result } = bad.body as Reply;
  expect(result.error.standardTensionN).toEqual(["The tension must be above 0 N"]);
  expect(result.error.areaMm2).toEqual(["Enter the cross-section (mm²)"]);
  expect(result.error.weightNPerM?.[0]).toMatch(/must be a number/);
  expect(result.initialValue).toMatchObject({ label, standardTensionN: "0", weightNPerM: "heavy", calibrationPpm: "15" });

  expect((await run(tapeNew.action as Fn, req("/admin/tapes/new", admin, form(good)))).status).toBe(302);
  const [row] = await getDb().select().from(tapes).where(eq(tapes.label, label));
  expect(await getTapeSpec(row!.id)).toEqual({ standardTempC: 20, standardTensionN: 50, areaMm2: 2.6, modulusGPa: 200, weightNPerM: 0.2, calibrationPpm: 15 });

  const edit = await run(tapeEdit.action as Fn, req(`/admin/tapes/${row!.id}`, admin, form({ ...good, calibrationPpm: "-8" })), { tapeId: row!.id });
  expect(edit.status).toBe(302);
  expect((await getTapeSpec(row!.id))!.calibrationPpm).toBe(-8);

  expect((await run(tapeEdit.action as Fn, req(`/admin/tapes/${row!.id}`, admin, form({ intent: "retire", confirm: "yes" })), { tapeId: row!.id })).status).toBe(302);
  const list = await run(tapeList.loader as Fn, req("/admin/tapes", admin));
  expect((list.body as { tapes: { id: string }[] }).tapes.map((t) => t.id)).not.toContain(row!.id);
  expect(await getTapeSpec(row!.id)).not.toBeNull();
});
