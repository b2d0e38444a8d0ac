// Small UI pieces of the sign-in and admin screens.
export function Notice({ kind, children, id }: { kind: "ok" | "warn" | "error"; children: React.ReactNode; id?: string }) {
  const tone = kind === "ok" ? "border-pass text-pass" : kind === "warn" ? "border-warn text-warn" : "border-fail text-fail";
  const mark = kind === "ok" ? "✓" : "⚠";
  return (
    <p id={id} role={kind === "ok" ? "status" : "alert"} className={`rounded-md border-2 p-3 font-bold ${tone}`}>
      <span aria-hidden="true">{mark} </span>
      {children}
    </p>
  );
}

export function formatWhen(iso: string | null | undefined) {
  if (!iso) return "never";
  const d = new Date(iso);
  if (Number.isNaN(d.getTime())) return iso;
  return d.toLocaleString("en-GB", { dateStyle: "medium", timeStyle: "short", timeZone: "UTC" }) + " UTC";
}

export const ROLE_TEXT: Record<string, string> = {
  admin: "Admin — users, sensors, sites, tolerances, API tokens",
  qa: "QA — review, exclude shots with a reason, sign off",
  crew: "Crew — log sessions and check-shots in the field",
  viewer: "Viewer — read-only reports (client or auditor)",
};
