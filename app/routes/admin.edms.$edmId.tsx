// /admin/edms/:edmId (issue 15): edit a reference EDM, retire it or bring it back (admin).
import { data, redirect } from "react-router";
import type { Route } from "./+types/admin.edms.$edmId";
import { ADMIN, ALL } from "~/auth/access";
import { setFlash } from "~/auth/flash.server";
import { requireRole } from "~/auth/guards.server";
import { RecordHistory, RegistryNav, RetirePanel } from "~/components/forms";
import { ReadOnlyRecord, RecordTitle } from "~/components/registry-record";
import { parseRegistryForm, edmSchema, toConformFieldErrors } from "~/contract/registry";
import { readFormCapped } from "~/http/body.server";
import { registryHistory } from "~/models/sensors.server";
import { getEdmFor, restoreEdm, retireEdm, updateEdm } from "~/models/edms.server";
import { invariantResponse } from "~/utils/http";
import { EdmForm, edmDefaults } from "./admin.edms.form";

export const meta: Route.MetaFunction = ({ data }) => [{ title: `${data?.edm.label ?? "Reference EDM"} — Shotbook` }];

export async function loader({ request, params }: Route.LoaderArgs) {
  // issue 14: every role reads the reference EDMs of its projects (others answer as unknown ids); only an admin edits
  const user = await requireRole(request, ALL);
  const edm = await getEdmFor(user, params.edmId);
  invariantResponse(edm, "There is no reference EDM with this id.", { status: 404 });
  const canEdit = user.role === "admin";
  const history = canEdit ? await registryHistory("edm", edm.id) : [];
  return { edm, history, canEdit };
}

export async function action({ request, params }: Route.ActionArgs) {
  const user = await requireRole(request, ADMIN);
  const formData = await readFormCapped(request);
  const intent = formData.get("intent");
  const back = async (text: string) => redirect("/admin/edms", { headers: { "Set-Cookie": await setFlash(request, { kind: "ok", text }) } });

  if (intent === "retire") {
    if (formData.get("confirm") !== "yes") return data({ retireError: "Tick “Yes, retire” to confirm.", result: undefined }, { status: 400 });
    const r = await retireEdm(user, params.edmId, String(formData.get("reason") ?? "").trim());
    invariantResponse(r.status !== 404, "There is no reference EDM with this id.", { status: 404 });
    return back("Reference EDM retired. Shots that used it are kept.");
  }
  if (intent === "restore") {
    const r = await restoreEdm(user, params.edmId);
    invariantResponse(r.status !== 404, "There is no reference EDM with this id.", { status: 404 });
    return back("Reference EDM back in use.");
  }

  const submission = parseRegistryForm(formData, edmSchema);
  if (submission.status !== "success") return data({ result: submission.reply(), retireError: null }, { status: submission.status === "error" ? 400 : 200 });
  const r = await updateEdm(user, params.edmId, submission.value);
  invariantResponse(r.status !== 404, "There is no reference EDM with this id.", { status: 404 });
  if (r.status === 400) return data({ result: submission.reply({ fieldErrors: toConformFieldErrors(r.body.errors) }), retireError: null }, { status: 400 });
  if (r.status === 409) return data({ result: submission.reply({ formErrors: [r.body.error] }), retireError: null }, { status: 409 });
  const changed = (r.body.changed as string[] | undefined) ?? [];
  return back(changed.length ? `Reference EDM “${submission.value.label}” saved (${changed.join(", ")}).` : "No changes to save.");
}

export default function EditEdm({ loaderData, actionData }: Route.ComponentProps) {
  const { edm, history, canEdit } = loaderData;
  if (!canEdit) return <EdmSummary edm={edm} />;
  return (
    <div className="space-y-4">
      <RegistryNav />
      <RecordTitle backTo="/admin/edms" backLabel="All reference EDMs" label={edm.label} retiredAt={edm.retiredAt} />
      <p className="text-muted">
        Id <code className="num">{edm.id}</code>. Changing its uncertainty recomputes the reference uncertainty of every shot that names it.
      </p>
      <EdmForm lastResult={actionData?.result} defaultValue={edmDefaults(edm)} submitLabel="Save changes" />
      <RetirePanel what="reference EDM" label={edm.label} retiredAt={edm.retiredAt} error={actionData?.retireError} />
      <RecordHistory rows={history} />
    </div>
  );
}

/** issue 14: what a non-admin member reads of one of their projects' reference EDMs. */
function EdmSummary({ edm }: { edm: Route.ComponentProps["loaderData"]["edm"] }) {
  const rows: [string, React.ReactNode][] = [
    ["Serial", edm.serial],
    ["Uncertainty (k = 1)", `${edm.uncertaintyMm} mm + ${edm.uncertaintyPpm} ppm`],
    ["Certificate", edm.certNumber ? `No. ${edm.certNumber}${edm.certLaboratory ? `, ${edm.certLaboratory}` : ""}, due ${edm.certDue ?? "—"}` : "none"],
    ["Your projects that use it", edm.projects.map((p) => p.name).join(", ")],
  ];
  return <ReadOnlyRecord backTo="/admin/edms" backLabel="All reference EDMs" label={edm.label} retiredAt={edm.retiredAt} rows={rows} testId="edm-summary" what="a reference EDM" />;
}
