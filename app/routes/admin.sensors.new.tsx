// /admin/sensors/new: register a sensor (admin).
import { data, Link, redirect } from "react-router";
import type { Route } from "./+types/admin.sensors.new";
import { ADMIN } from "~/auth/access";
import { setFlash } from "~/auth/flash.server";
import { requireRole } from "~/auth/guards.server";
import { RegistryNav } from "~/components/forms";
import { parseRegistryForm, sensorSchema, toConformFieldErrors } from "~/contract/registry";
import { createSensor } from "~/models/sensors.server";
import { SensorForm, sensorDefaults } from "./admin.sensors.form";
import { readFormCapped } from "~/http/body.server";

export const meta: Route.MetaFunction = () => [{ title: "New sensor — Shotbook" }];

export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, ADMIN);
  return null;
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requireRole(request, ADMIN);
  const submission = parseRegistryForm(await readFormCapped(request), sensorSchema);
  if (submission.status !== "success") return data({ result: submission.reply() }, { status: submission.status === "error" ? 400 : 200 });
  const r = await createSensor(user, submission.value);
  if (r.status === 400) return data({ result: submission.reply({ fieldErrors: toConformFieldErrors(r.body.errors) }) }, { status: 400 });
  if (r.status === 409) return data({ result: submission.reply({ formErrors: [r.body.error] }) }, { status: 409 });
  const text = r.status === 201 ? `Sensor “${submission.value.label}” added.` : `Sensor “${submission.value.label}” was already registered with these values.`;
  return redirect("/admin/sensors", { headers: { "Set-Cookie": await setFlash(request, { kind: "ok", text }) } });
}

export default function NewSensor({ actionData }: Route.ComponentProps) {
  return (
    <div className="space-y-4">
      <RegistryNav />
      <p>
        <Link to="/admin/sensors" className="underline underline-offset-4">
          ← All sensors
        </Link>
      </p>
      <h1 className="text-3xl font-bold">New sensor</h1>
      <SensorForm lastResult={actionData?.result} defaultValue={sensorDefaults()} submitLabel="Add sensor" />
    </div>
  );
}
