// issue 13: the report model refuses with AppError (app/contract/errors.ts), never a Response;
// the bodies are api.md's (`{ error }`, with `errors[]` for an invalid query).
import { expect, test } from "vitest";
import { AppError } from "~/contract/errors";
import { appErrorResponse } from "~/http/app-error.server";
import { buildSensorReport, sensorReportSummary } from "~/models/reports.server";
import { makeSensor, makeUser } from "../support/registry-fixtures";

test("an unknown project or an invalid period is an AppError with api.md's body; an unknown sensor is null", async () => {
  const [admin, sensor] = await Promise.all([makeUser("admin"), makeSensor()]);
  const actor = { id: admin.id, role: admin.role };
  const project = await buildSensorReport(actor, sensor.id, { projectId: "no-such-project" }).catch((e: unknown) => e);
  expect(project).toBeInstanceOf(AppError);
  const res = appErrorResponse(project as AppError);
  expect(res.status).toBe(404);
  expect(await res.json()).toEqual({ error: "No project no-such-project." });

  const period = await buildSensorReport(actor, sensor.id, new URLSearchParams("from=2026-13-40")).catch((e: unknown) => e);
  expect(period).toBeInstanceOf(AppError);
  expect((period as AppError).status).toBe(400);
  expect(await appErrorResponse(period as AppError).json()).toEqual({ error: "Invalid query.", errors: [{ path: "from", message: "from must be a date (YYYY-MM-DD)" }] });

  expect(await buildSensorReport(actor, "no-such-sensor")).toBeNull();
  expect(await sensorReportSummary(actor, "no-such-sensor")).toBeNull();
});
