// Who may open the registry's admin screens, through their real loaders and actions: every role
// reads the lists, only an admin opens the forms, a signed-out visitor is sent to sign in.
import { expect, test } from "vitest";
import * as sensorList from "~/routes/admin.sensors";
import * as sensorNew from "~/routes/admin.sensors.new";
import * as tapeList from "~/routes/admin.tapes";
import * as siteList from "~/routes/admin.sites";
import * as projectList from "~/routes/admin.projects";
import { makeUser } from "../support/registry-fixtures";
import { form, req, run, type Fn, goodSensor } from "../support/admin-forms";

test("every role reads the sensor and site lists; only an admin may open the forms", async () => {
  const viewer = await makeUser("viewer");
  const list = await run(sensorList.loader as Fn, req("/admin/sensors", viewer));
  expect(list.status).toBe(200);
  expect((list.body as { canEdit: boolean }).canEdit).toBe(false);
  expect((await run(siteList.loader as Fn, req("/admin/sites", viewer))).status).toBe(200);
  expect((await run(sensorNew.loader as Fn, req("/admin/sensors/new", viewer))).status).toBe(403);
  expect((await run(sensorNew.action as Fn, req("/admin/sensors/new", viewer, form(goodSensor)))).status).toBe(403);
  // issue 14: the tape list is read like the sensor list, each user their projects' tapes (this viewer has none)
  const tapesSeen = await run(tapeList.loader as Fn, req("/admin/tapes", viewer));
  expect(tapesSeen.status).toBe(200);
  expect(tapesSeen.body).toMatchObject({ canEdit: false, tapes: [] });
  expect((await run(projectList.loader as Fn, req("/admin/projects", viewer))).status).toBe(403);
  const anon = await run(sensorList.loader as Fn, req("/admin/sensors", null));
  expect(anon.status).toBe(302);
  expect(anon.location).toMatch(/^\/login\?redirectTo=/);
});
