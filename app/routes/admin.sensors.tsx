// /admin/sensors: the sensor list. Every role may read it; only an admin sees the edit links.
import { data, Link } from "react-router";
import type { Route } from "./+types/admin.sensors";
import { ALL } from "~/auth/access";
import { takeFlash } from "~/auth/flash.server";
import { requireRole } from "~/auth/guards.server";
import { RegistryListHead } from "~/components/registry-record";
import { listSensors } from "~/models/sensors.server";
import { calibrationState, formatTolerance, SENSOR_KIND_LABEL } from "~/contract/registry";

export const meta: Route.MetaFunction = () => [{ title: "Sensors — Shotbook" }];

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireRole(request, ALL);
  const includeRetired = new URL(request.url).searchParams.get("retired") === "show";
  const [rows, all] = await Promise.all([listSensors(user, { includeRetired }), listSensors(user, { includeRetired: true })]);
  const { flash, headers } = await takeFlash(request);
  return data(
    {
      canEdit: user.role === "admin",
      includeRetired,
      retiredCount: all.filter((s) => s.retiredAt).length,
      today: new Date().toISOString().slice(0, 10),
      flash,
      sensors: rows.map((s) => ({
        id: s.id,
        label: s.label,
        serial: s.serial,
        kind: s.kind,
        wavelengthNm: s.wavelengthNm,
        modulationHz: s.modulationHz,
        toleranceMm: s.toleranceMm,
        tolerancePpm: s.tolerancePpm,
        calibrationDue: s.calibrationDue,
        retiredAt: s.retiredAt,
      })),
    },
    { headers },
  );
}

function CalibrationDue({ due, today }: { due: string | null; today: string }) {
  const state = calibrationState(due, today);
  if (state === "none") return <span className="text-muted">not set</span>;
  return (
    <span className="inline-flex flex-wrap items-center gap-2">
      <span className="num">{due}</span>
      {state === "overdue" ? (
        <span className="inline-flex items-center gap-1 font-bold text-fail" data-calibration="overdue">
          <svg width="18" height="18" viewBox="0 0 20 20" aria-hidden="true">
            <path d="M10 1.5L19 18H1z" fill="currentColor" />
            <path d="M10 7v5.5M10 14.5v1.8" stroke="var(--bg)" strokeWidth="2.2" />
          </svg>
          Overdue
        </span>
      ) : state === "soon" ? (
        <span className="inline-flex items-center gap-1 font-bold text-warn" data-calibration="soon">
          <svg width="18" height="18" viewBox="0 0 20 20" aria-hidden="true">
            <circle cx="10" cy="10" r="8" fill="none" stroke="currentColor" strokeWidth="2.2" />
            <path d="M10 5v5l3 2" stroke="currentColor" strokeWidth="2.2" fill="none" />
          </svg>
          Due within 30 days
        </span>
      ) : null}
    </span>
  );
}

export default function Sensors({ loaderData }: Route.ComponentProps) {
  const { sensors, canEdit, includeRetired, retiredCount, today, flash } = loaderData;
  return (
    <div className="space-y-4">
      <RegistryListHead title="Sensors" listTo="/admin/sensors" newLabel="New sensor" plural="sensors" canEdit={canEdit} flash={flash} includeRetired={includeRetired} retiredCount={retiredCount} />
      {sensors.length === 0 ? (
        <div className="card">
          <p className="text-lg font-bold">No sensors yet.</p>
          <p>{canEdit ? "Add the first sensor with “New sensor”, or POST it to /api/sensors from a script." : "An admin adds the sensors."}</p>
        </div>
      ) : (
        <div className="overflow-x-auto">
          <table className="w-full border-collapse text-left" data-testid="sensor-table">
            <thead>
              <tr className="border-b-2 border-line">
                <th className="p-2">Label</th>
                <th className="p-2">Serial</th>
                <th className="p-2">Kind</th>
                <th className="p-2 text-right">Wavelength</th>
                <th className="p-2">Tolerance</th>
                <th className="p-2">Calibration due</th>
              </tr>
            </thead>
            <tbody>
              {sensors.map((s) => (
                <tr key={s.id} className="border-b border-line align-top">
                  <td className="p-2 font-bold">
                    {canEdit ? (
                      <Link className="inline-flex min-h-11 items-center underline underline-offset-4" to={`/admin/sensors/${encodeURIComponent(s.id)}`}>
                        {s.label}
                      </Link>
                    ) : (
                      s.label
                    )}
                    {s.retiredAt ? <span className="ml-2 rounded border-2 border-line px-1.5 text-sm uppercase">Retired</span> : null}
                  </td>
                  <td className="p-2 num">{s.serial}</td>
                  <td className="p-2">
                    {SENSOR_KIND_LABEL[s.kind]}
                    {s.kind === "cw" && s.modulationHz.length ? <span className="block text-sm text-muted num">{s.modulationHz.map((f) => `${f / 1e6} MHz`).join(", ")}</span> : null}
                  </td>
                  <td className="p-2 num text-right">{s.wavelengthNm} nm</td>
                  <td className="p-2 num">{formatTolerance(s.toleranceMm, s.tolerancePpm)}</td>
                  <td className="p-2">
                    <CalibrationDue due={s.calibrationDue} today={today} />
                  </td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      )}
    </div>
  );
}
