// Issue 11: names and labels in the registry refuse control characters (a line break or an
// escape code inside a label would spoil CSV rows, mail subjects and terminals), with a clear
// message at the field — through the JSON API and in the shared schemas the forms use.
import { expect, test } from "vitest";
import { eq } from "drizzle-orm";
import { inviteSchema, tokenSchema } from "~/auth/schemas";
import { getDb } from "~/db/client.server";
import { sensors } from "~/db/schema";
import { projectSchema, sensorSchema, siteSchema, stationSchema, tapeSchema, targetSchema } from "~/contract/registry";
import { action as sensorsAction } from "~/routes/api.sensors";
import { apiRequest, call, makeUser } from "../support/registry-fixtures";

const BAD = ["Tripod\nscanner", "Red\u001b[31m label", "Tab\there", "Bell\u0007", "Null\u0000byte", "C1\u0085next", "Del\u007f"];

function messageAt(schema: { safeParse(v: unknown): { success: boolean; error?: { issues: { path: PropertyKey[]; message: string }[] } } }, value: unknown, path: string) {
  const r = schema.safeParse(value);
  return r.error?.issues.find((i) => i.path.map(String).join(".") === path)?.message;
}

test("every registry label and name refuses control characters with a field message", () => {
  for (const bad of BAD) {
    const where = JSON.stringify(bad);
    expect(messageAt(sensorSchema, { label: bad }, "label"), where).toMatch(/Remove the tabs, line breaks or other control characters from a label/);
    expect(messageAt(tapeSchema, { label: bad }, "label"), where).toMatch(/control characters/);
    expect(messageAt(targetSchema, { label: bad }, "label"), where).toMatch(/control characters from the target's label/);
    expect(messageAt(stationSchema, { label: bad }, "label"), where).toMatch(/control characters from the station's label/);
    expect(messageAt(siteSchema, { name: bad, targets: [{ label: bad }] }, "name"), where).toMatch(/the site's name/);
    expect(messageAt(siteSchema, { name: bad, targets: [{ label: bad }] }, "targets.0.label"), where).toMatch(/control characters/);
    expect(messageAt(projectSchema, { name: bad }, "name"), where).toMatch(/the project's name/);
    expect(messageAt(projectSchema, { name: "Bridge", client: bad }, "client"), where).toMatch(/the client's name/);
    expect(messageAt(inviteSchema, { email: "a@fernhollow.test", role: "qa", name: bad }, "name"), where).toMatch(/control characters from the name/);
    expect(messageAt(tokenSchema, { userId: "u1", name: bad }, "name"), where).toMatch(/control characters/);
  }
  // Ordinary labels, accents and symbols included, pass.
  for (const good of ["Tripod scanner T2", "Böschung Süd – 30 m", "P50 prism (retro) ±3 mm"]) {
    expect(messageAt(sensorSchema, { label: good }, "label"), good).toBeUndefined();
    expect(messageAt(inviteSchema, { email: "a@fernhollow.test", role: "qa", name: good }, "name"), good).toBeUndefined();
  }
});

test("POST /api/sensors with a line break in the label answers 400 at label and stores nothing", async () => {
  const admin = await makeUser("admin");
  const serial = `FH-CTL-${crypto.randomUUID().slice(0, 6)}`;
  const r = await call(
    sensorsAction as never,
    apiRequest("/api/sensors", {
      method: "POST",
      user: admin,
      json: {
        label: "Tripod\r\nscanner",
        serial,
        kind: "pulsed",
        wavelengthNm: 1550,
        appliesAirCorrection: false,
        toleranceMm: 3,
        tolerancePpm: 10,
      },
    }),
  );
  expect(r.status).toBe(400);
  const errors = r.json.errors as { path: string; message: string }[];
  expect(errors).toEqual([{ path: "label", message: "Remove the tabs, line breaks or other control characters from a label" }]);
  expect(await getDb().select().from(sensors).where(eq(sensors.serial, serial))).toEqual([]);
});
