// /admin/sensors/:sensorId: edit a sensor's profile, retire it or bring it back (admin).
import { data, Link, redirect } from "react-router";
import type { Route } from "./+types/admin.sensors.$sensorId";
import { ADMIN } from "~/auth/access";
import { setFlash } from "~/auth/flash.server";
import { requireRole } from "~/auth/guards.server";
import { RecordHistory, RegistryNav, RetirePanel } from "~/components/forms";
import { parseRegistryForm, sensorSchema, toConformFieldErrors } from "~/contract/registry";
import { getSensor, registryHistory, restoreSensor, retireSensor, sensorUsage, updateSensor } from "~/models/sensors.server";
import { invariantResponse } from "~/utils/http";
import { SensorForm, sensorDefaults } from "./admin.sensors.form";
import { readFormCapped } from "~/http/body.server";

export const meta: Route.MetaFunction = ({ data }) => [{ title: `${data?.sensor.label ?? "Sensor"} — Shotbook` }];

export async function loader({ request, params }: Route.LoaderArgs) {
  await requireRole(request, ADMIN);
  const sensor = await getSensor(params.sensorId);
  invariantResponse(sensor, "There is no sensor with this id.", { status: 404 });
  const [usage, history] = await Promise.all([sensorUsage(sensor.id), registryHistory("sensor", sensor.id)]);
  return { sensor, usage, history };
}

export async function action({ request, params }: Route.ActionArgs) {
  const user = await requireRole(request, ADMIN);
  const formData = await readFormCapped(request);
  const intent = formData.get("intent");
  const back = async (text: string) => redirect("/admin/sensors", { headers: { "Set-Cookie": await setFlash(request, { kind: "ok", text }) } });

  if (intent === "retire") {
    if (formData.get("confirm") !== "yes") return data({ retireError: "Tick “Yes, retire” to confirm.", result: undefined }, { status: 400 });
    const r = await retireSensor(user, params.sensorId, String(formData.get("reason") ?? "").trim());
    invariantResponse(r.status !== 404, "There is no sensor with this id.", { status: 404 });
    return back("Sensor retired. Its shots and reports are kept.");
  }
  if (intent === "restore") {
    const r = await restoreSensor(user, params.sensorId);
    invariantResponse(r.status !== 404, "There is no sensor with this id.", { status: 404 });
    return back("Sensor back in use.");
  }

  const submission = parseRegistryForm(formData, sensorSchema);
  if (submission.status !== "success") return data({ result: submission.reply(), retireError: null }, { status: submission.status === "error" ? 400 : 200 });
  const r = await updateSensor(user, params.sensorId, submission.value);
  invariantResponse(r.status !== 404, "There is no sensor with this id.", { status: 404 });
  if (r.status === 400) return data({ result: submission.reply({ fieldErrors: toConformFieldErrors(r.body.errors) }), retireError: null }, { status: 400 });
  if (r.status === 409) return data({ result: submission.reply({ formErrors: [r.body.error] }), retireError: null }, { status: 409 });
  const changed = (r.body.changed as string[] | undefined) ?? [];
  return back(changed.length ? `Sensor “${submission.value.label}” saved (${changed.join(", ")}).` : "No changes to save.");
}

export default function EditSensor({ loaderData, actionData }: Route.ComponentProps) {
  const { sensor, usage, history } = loaderData;
  return (
    <div className="space-y-4">
      <RegistryNav />
      <p>
        <Link to="/admin/sensors" className="underline underline-offset-4">
          ← All sensors
        </Link>
      </p>
      <h1 className="text-3xl font-bold">
        {sensor.label} {sensor.retiredAt ? <span className="rounded border-2 border-line px-1.5 align-middle text-base uppercase">Retired</span> : null}
      </h1>
      <p className="text-muted">
        Id <code className="num">{sensor.id}</code>. Changing the kind, tolerance, air handling or modulation recomputes every stored shot of this sensor.
      </p>
      <SensorForm lastResult={actionData?.result} defaultValue={sensorDefaults(sensor)} submitLabel="Save changes" />
      <RetirePanel
        what="sensor"
        label={sensor.label}
        retiredAt={sensor.retiredAt}
        usage={usage.sessions ? `${usage.sessions} check session${usage.sessions === 1 ? "" : "s"} refer to it.` : "No check sessions refer to it yet."}
        error={actionData?.retireError}
      />
      <RecordHistory rows={history} />
    </div>
  );
}
