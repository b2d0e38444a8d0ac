// /admin/tapes/:tapeId: edit a tape's profile, retire it or bring it back (admin).
import { data, redirect } from "react-router";
import type { Route } from "./+types/admin.tapes.$tapeId";
import { ADMIN, ALL } from "~/auth/access";
import { setFlash } from "~/auth/flash.server";
import { requireRole } from "~/auth/guards.server";
import { RecordHistory, RegistryNav, RetirePanel } from "~/components/forms";
import { ReadOnlyRecord, RecordTitle } from "~/components/registry-record";
import { parseRegistryForm, tapeSchema, toConformFieldErrors } from "~/contract/registry";
import { registryHistory } from "~/models/sensors.server";
import { getTapeFor, restoreTape, retireTape, updateTape } from "~/models/tapes.server";
import { invariantResponse } from "~/utils/http";
import { TapeForm, tapeDefaults } from "./admin.tapes.form";
import { readFormCapped } from "~/http/body.server";

export const meta: Route.MetaFunction = ({ data }) => [{ title: `${data?.tape.label ?? "Tape"} — Shotbook` }];

export async function loader({ request, params }: Route.LoaderArgs) {
  // issue 14: every role reads the tapes of its projects (others answer as unknown ids); only an admin edits
  const user = await requireRole(request, ALL);
  const tape = await getTapeFor(user, params.tapeId);
  invariantResponse(tape, "There is no tape with this id.", { status: 404 });
  const canEdit = user.role === "admin";
  const history = canEdit ? await registryHistory("tape", tape.id) : [];
  return { tape, history, canEdit };
}

export async function action({ request, params }: Route.ActionArgs) {
  const user = await requireRole(request, ADMIN);
  const formData = await readFormCapped(request);
  const intent = formData.get("intent");
  const back = async (text: string) => redirect("/admin/tapes", { headers: { "Set-Cookie": await setFlash(request, { kind: "ok", text }) } });

  if (intent === "retire") {
    if (formData.get("confirm") !== "yes") return data({ retireError: "Tick “Yes, retire” to confirm.", result: undefined }, { status: 400 });
    const r = await retireTape(user, params.tapeId, String(formData.get("reason") ?? "").trim());
    invariantResponse(r.status !== 404, "There is no tape with this id.", { status: 404 });
    return back("Tape retired. Shots that used it are kept.");
  }
  if (intent === "restore") {
    const r = await restoreTape(user, params.tapeId);
    invariantResponse(r.status !== 404, "There is no tape with this id.", { status: 404 });
    return back("Tape back in use.");
  }

  const submission = parseRegistryForm(formData, tapeSchema);
  if (submission.status !== "success") return data({ result: submission.reply(), retireError: null }, { status: submission.status === "error" ? 400 : 200 });
  const r = await updateTape(user, params.tapeId, submission.value);
  invariantResponse(r.status !== 404, "There is no tape with this id.", { status: 404 });
  if (r.status === 400) return data({ result: submission.reply({ fieldErrors: toConformFieldErrors(r.body.errors) }), retireError: null }, { status: 400 });
  if (r.status === 409) return data({ result: submission.reply({ formErrors: [r.body.error] }), retireError: null }, { status: 409 });
  const changed = (r.body.changed as string[] | undefined) ?? [];
  return back(changed.length ? `Tape “${submission.value.label}” saved (${changed.join(", ")}).` : "No changes to save.");
}

export default function EditTape({ loaderData, actionData }: Route.ComponentProps) {
  const { tape, history, canEdit } = loaderData;
  if (!canEdit) return <TapeSummary tape={tape} />;
  return (
    <div className="space-y-4">
      <RegistryNav />
      <RecordTitle backTo="/admin/tapes" backLabel="All tapes" label={tape.label} retiredAt={tape.retiredAt} />
      <p className="text-muted">
        Id <code className="num">{tape.id}</code>. Changing its constants recomputes every shot whose reference distance was taped with it.
      </p>
      <TapeForm lastResult={actionData?.result} defaultValue={tapeDefaults(tape)} submitLabel="Save changes" />
      <RetirePanel what="tape" label={tape.label} retiredAt={tape.retiredAt} error={actionData?.retireError} />
      <RecordHistory rows={history} />
    </div>
  );
}

/** issue 14: what a non-admin member reads of one of their projects' tapes. */
function TapeSummary({ tape }: { tape: Route.ComponentProps["loaderData"]["tape"] }) {
  const rows: [string, React.ReactNode][] = [
    ["Standard conditions", `${tape.standardTempC} °C, ${tape.standardTensionN} N`],
    ["Cross-section", `${tape.areaMm2} mm²`],
    ["Modulus", `${tape.modulusGPa} GPa`],
    ["Weight", `${tape.weightNPerM} N/m`],
    ["Certificate correction", `${tape.calibrationPpm > 0 ? "+" : ""}${tape.calibrationPpm} ppm`],
    ["Uncertainty (k = 1)", tape.uncertaintyMm != null ? `${tape.uncertaintyMm} mm + ${tape.uncertaintyPpm ?? 0} ppm` : "not given"],
    ["Certificate", tape.certNumber ? `No. ${tape.certNumber}${tape.certLaboratory ? `, ${tape.certLaboratory}` : ""}, due ${tape.certDue ?? "—"}` : "none"],
    ["Your projects that use it", tape.projects.map((p) => p.name).join(", ")],
  ];
  return <ReadOnlyRecord backTo="/admin/tapes" backLabel="All tapes" label={tape.label} retiredAt={tape.retiredAt} rows={rows} testId="tape-summary" what="a tape" />;
}
