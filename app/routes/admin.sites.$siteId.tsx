// /admin/sites/:siteId: edit a site, its stations and targets; retire it or bring it back (admin).
// A station or target taken out of the form is retired, never deleted: shots refer to them.
import { data, Link, redirect } from "react-router";
import type { Route } from "./+types/admin.sites.$siteId";
import { ADMIN } from "~/auth/access";
import { setFlash } from "~/auth/flash.server";
import { requireRole } from "~/auth/guards.server";
import { RecordHistory, RegistryNav, RetirePanel } from "~/components/forms";
import { parseRegistryForm, siteSchema, toConformFieldErrors } from "~/contract/registry";
import { registryHistory } from "~/models/sensors.server";
import { getSite, restoreSite, retireSite, siteUsage, updateSite } from "~/models/sites.server";
import { invariantResponse } from "~/utils/http";
import { SiteForm, siteDefaults } from "./admin.sites.form";
import { BODY_LIMITS, readFormCapped } from "~/http/body.server";

export const meta: Route.MetaFunction = ({ data }) => [{ title: `${data?.site.name ?? "Site"} — Shotbook` }];

export async function loader({ request, params }: Route.LoaderArgs) {
  await requireRole(request, ADMIN);
  const site = await getSite(params.siteId);
  invariantResponse(site, "There is no site with this id.", { status: 404 });
  const [usage, history] = await Promise.all([siteUsage(site.id), registryHistory("site", site.id)]);
  return { site, usage, history };
}

export async function action({ request, params }: Route.ActionArgs) {
  const user = await requireRole(request, ADMIN);
  const formData = await readFormCapped(request, BODY_LIMITS.siteForm);
  const intent = formData.get("intent");
  const back = async (text: string) => redirect("/admin/sites", { headers: { "Set-Cookie": await setFlash(request, { kind: "ok", text }) } });

  if (intent === "retire") {
    if (formData.get("confirm") !== "yes") return data({ retireError: "Tick “Yes, retire” to confirm.", result: undefined }, { status: 400 });
    const r = await retireSite(user, params.siteId, String(formData.get("reason") ?? "").trim());
    invariantResponse(r.status !== 404, "There is no site with this id.", { status: 404 });
    return back("Site retired. Its sessions and shots are kept.");
  }
  if (intent === "restore") {
    const r = await restoreSite(user, params.siteId);
    invariantResponse(r.status !== 404, "There is no site with this id.", { status: 404 });
    return back("Site back in use.");
  }

  const submission = parseRegistryForm(formData, siteSchema);
  if (submission.status !== "success") return data({ result: submission.reply(), retireError: null }, { status: submission.status === "error" ? 400 : 200 });
  const r = await updateSite(user, params.siteId, submission.value);
  invariantResponse(r.status !== 404, "There is no site with this id.", { status: 404 });
  if (r.status === 400) return data({ result: submission.reply({ fieldErrors: toConformFieldErrors(r.body.errors) }), retireError: null }, { status: 400 });
  if (r.status === 409) return data({ result: submission.reply({ formErrors: [r.body.error] }), retireError: null }, { status: 409 });
  return back(`Site “${submission.value.name}” saved.`);
}

export default function EditSite({ loaderData, actionData }: Route.ComponentProps) {
  const { site, usage, history } = loaderData;
  return (
    <div className="space-y-4">
      <RegistryNav />
      <p>
        <Link to="/admin/sites" className="underline underline-offset-4">
          ← All sites
        </Link>
      </p>
      <h1 className="text-3xl font-bold">
        {site.name} {site.retiredAt ? <span className="rounded border-2 border-line px-1.5 align-middle text-base uppercase">Retired</span> : null}
      </h1>
      <p className="text-muted">
        Id <code className="num">{site.id}</code>. Removing a station or target retires it; shots that refer to it keep it. Changing surveyed positions recomputes the shots taken here.
      </p>
      <SiteForm lastResult={actionData?.result} defaultValue={siteDefaults(site)} submitLabel="Save changes" retiredTargets={site.targets.filter((t) => t.retiredAt)} />
      <RetirePanel
        what="site"
        label={site.name}
        retiredAt={site.retiredAt}
        usage={usage.sessions ? `${usage.sessions} check session${usage.sessions === 1 ? "" : "s"} were held here.` : "No check sessions were held here yet."}
        error={actionData?.retireError}
      />
      <RecordHistory rows={history} />
    </div>
  );
}
