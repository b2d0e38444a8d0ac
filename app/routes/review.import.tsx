import { Link } from "react-router";
import type { Route } from "./+types/review.import";
import { FIELD } from "~/auth/access";
import { requireRole } from "~/auth/guards.server";
import { importContext } from "~/models/imports.server";
import { IMPORT_FIELDS, type ImportField } from "~/contract/import-rows";
import { useCsvImport } from "~/components/review/use-csv-import";
import { num, signed } from "~/components/review/format";

export const meta: Route.MetaFunction = () => [{ title: "Import a sensor's CSV · Shotbook" }];

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireRole(request, FIELD);
  return importContext(user);
}

const PREVIEW = 25;

export default function ImportPage({ loaderData }: Route.ComponentProps) {
  const { sensors, sites, mappings, projects } = loaderData;
  const {
    sensorId,
    siteId,
    setSiteId,
    projectId,
    setProjectId,
    fileName,
    headers,
    rows,
    parseErrors,
    mapping,
    setMapping,
    air,
    setAir,
    phase,
    progress,
    results,
    sendError,
    formError,
    cancel,
    confirmed,
    setConfirmed,
    toggleConfirm,
    mapped,
    implausible,
    valid,
    invalid,
    unconfirmed,
    counts,
    chooseSensor,
    readFile,
    send,
  } = useCsvImport({ sensors, sites, mappings });

  return (
    <div className="space-y-6">
      <nav aria-label="Breadcrumb">
        <Link to="/review" className="inline-flex min-h-11 items-center underline underline-offset-4">
          ← Sensor verdicts
        </Link>
      </nav>
      <h1 className="text-3xl font-bold">Import check-shots from a sensor's CSV</h1>
      <p className="max-w-3xl">
        Upload the CSV the sensor's own software exports. Map its columns once per sensor (the mapping is remembered), look at the preview and its per-row errors, then import the valid rows. They are
        judged exactly like a tablet's sync; importing the same file again adds nothing twice.
      </p>

      <section className="card grid gap-4 sm:grid-cols-2 lg:grid-cols-4" aria-label="What the file holds">
        <div>
          <label htmlFor="i-sensor" className="field-label">
            Sensor
          </label>
          <select id="i-sensor" className="input" value={sensorId} onChange={(e) => chooseSensor(e.target.value)}>
            <option value="">Choose…</option>
            {sensors.map((s) => (
              <option key={s.id} value={s.id}>
                {s.label} ({s.serial}){mappings[s.id] ? " · mapping saved" : ""}
              </option>
            ))}
          </select>
        </div>
        <div>
          <label htmlFor="i-site" className="field-label">
            Site
          </label>
          <select id="i-site" className="input" value={siteId} onChange={(e) => setSiteId(e.target.value)}>
            <option value="">Choose…</option>
            {sites.map((s) => (
              <option key={s.id} value={s.id}>
                {s.name}
              </option>
            ))}
          </select>
        </div>
        <div>
          <label htmlFor="i-project" className="field-label">
            Project (optional)
          </label>
          <select id="i-project" className="input" value={projectId} onChange={(e) => setProjectId(e.target.value)}>
            <option value="">None / implied</option>
            {projects.map((p) => (
              <option key={p.id} value={p.id}>
                {p.name}
              </option>
            ))}
          </select>
        </div>
        <div>
          <label htmlFor="i-file" className="field-label">
            CSV file
          </label>
          <input id="i-file" type="file" accept=".csv,text/csv,text/plain" className="input" onChange={(e) => e.target.files?.[0] && void readFile(e.target.files[0])} />
        </div>
      </section>

      {phase === "parsing" || phase === "sending" ? (
        <div aria-live="polite">
          <label htmlFor="i-progress" className="field-label">
            {phase === "parsing" ? `Reading ${fileName}…` : `Importing ${valid.length} rows…`} {progress} %
          </label>
          <progress id="i-progress" max={100} value={progress} className="h-6 w-full" />
          {phase === "sending" ? (
            <button type="button" className="btn-secondary mt-2" onClick={() => (cancel.current = true)}>
              Stop after this chunk
            </button>
          ) : null}
        </div>
      ) : null}

      {headers.length && phase !== "parsing" ? (
        <>
          <section className="card space-y-3" aria-labelledby="h-map">
            <h2 id="h-map" className="text-2xl font-bold">
              Columns of {fileName} ({rows.length} rows)
            </h2>
            {sensorId && mappings[sensorId] ? <p>The saved mapping of this sensor is filled in.</p> : <p>A first guess from the headers is filled in; check it.</p>}
            <div className="grid gap-3 sm:grid-cols-2 lg:grid-cols-3">
              {IMPORT_FIELDS.map((f) => (
                <div key={f.key}>
                  <label htmlFor={`map-${f.key}`} className="field-label">
                    {f.label}
                    {f.required ? " *" : ""}
                  </label>
                  <select id={`map-${f.key}`} className="input" value={mapping[f.key as ImportField] ?? ""} onChange={(e) => setMapping({ ...mapping, [f.key]: e.target.value || undefined })}>
                    <option value="">— not in the file —</option>
                    {headers.map((h) => (
                      <option key={h} value={h}>
                        {h}
                      </option>
                    ))}
                  </select>
                  {f.hint ? <p className="text-sm text-muted">{f.hint}</p> : null}
                </div>
              ))}
              <div>
                <label htmlFor="map-ru" className="field-label">
                  Unit of the sensor range
                </label>
                <select id="map-ru" className="input" value={mapping._rangeUnit ?? "m"} onChange={(e) => setMapping({ ...mapping, _rangeUnit: e.target.value as "m" | "mm" })}>
                  <option value="m">metres (m)</option>
                  <option value="mm">millimetres (mm)</option>
                </select>
              </div>
              <div>
                <label htmlFor="map-du" className="field-label">
                  Unit of the reference distance
                </label>
                <select id="map-du" className="input" value={mapping._distanceUnit ?? "m"} onChange={(e) => setMapping({ ...mapping, _distanceUnit: e.target.value as "m" | "mm" })}>
                  <option value="m">metres (m)</option>
                  <option value="mm">millimetres (mm)</option>
                </select>
              </div>
              <div>
                <label htmlFor="map-tz" className="field-label">
                  UTC offset of times without one
                </label>
                <input id="map-tz" className="input" value={mapping._timeOffset ?? "+00:00"} onChange={(e) => setMapping({ ...mapping, _timeOffset: e.target.value })} pattern="[+-]\d{2}:\d{2}" />
              </div>
            </div>
          </section>

          <section className="card grid gap-3 sm:grid-cols-4" aria-label="Session air">
            <p className="sm:col-span-4">The rows become one session. Its air (for sensors that do not correct for air themselves):</p>
            <div>
              <label htmlFor="a-t" className="field-label">
                Air temperature (°C)
              </label>
              <input id="a-t" inputMode="decimal" className="input" value={air.airTempC} onChange={(e) => setAir({ ...air, airTempC: e.target.value })} />
            </div>
            <div>
              <label htmlFor="a-p" className="field-label">
                Pressure (hPa)
              </label>
              <input id="a-p" inputMode="decimal" className="input" value={air.pressureHpa} onChange={(e) => setAir({ ...air, pressureHpa: e.target.value })} />
            </div>
            <div>
              <label htmlFor="a-h" className="field-label">
                Humidity (%)
              </label>
              <input id="a-h" inputMode="decimal" className="input" value={air.humidityPct} onChange={(e) => setAir({ ...air, humidityPct: e.target.value })} />
            </div>
            <div>
              <label htmlFor="a-n" className="field-label">
                Session note
              </label>
              <input id="a-n" className="input" value={air.note} onChange={(e) => setAir({ ...air, note: e.target.value })} />
            </div>
          </section>

          <section className="space-y-3" aria-labelledby="h-preview">
            <h2 id="h-preview" className="text-2xl font-bold">
              Preview
            </h2>
            <p className="text-lg" data-testid="import-counts">
              <strong>{valid.length}</strong> valid rows, <strong className={invalid.length ? "text-fail" : ""}>{invalid.length}</strong> with errors
              {unconfirmed.length ? (
                <>
                  , <strong className="text-warn">{unconfirmed.length}</strong> implausible (mm typed as m?) awaiting your check
                </>
              ) : null}
              .
            </p>
            {parseErrors.length ? (
              <ul className="text-warn">
                {parseErrors.map((e) => (
                  <li key={e}>⚠ {e}</li>
                ))}
              </ul>
            ) : null}
            <div className="overflow-x-auto">
              <table className="w-full border-collapse text-left num">
                <caption className="sr-only">First rows as they will be imported</caption>
                <thead>
                  <tr className="border-b-2 border-line">
                    <th scope="col" className="py-1 pr-2">
                      Row
                    </th>
                    <th scope="col" className="py-1 pr-2">
                      Time
                    </th>
                    <th scope="col" className="py-1 pr-2 text-right">
                      Reference (m)
                    </th>
                    <th scope="col" className="py-1 pr-2 text-right">
                      Range (m)
                    </th>
                    <th scope="col" className="py-1 pr-2 text-right">
                      Error (mm)
                    </th>
                    <th scope="col" className="py-1 pr-2 text-right">
                      Reflectance (%)
                    </th>
                    <th scope="col" className="py-1">
                      Problems
                    </th>
                  </tr>
                </thead>
                <tbody>
                  {mapped.slice(0, PREVIEW).map((r) => {
                    const c = r.c.kind === "error" ? null : r.c;
                    return (
                      <tr key={r.row} className="border-b border-line" data-row={r.row} data-ok={r.m.ok}>
                        <td className="py-1 pr-2">{r.row}</td>
                        <td className="py-1 pr-2 whitespace-nowrap">{r.m.ok ? r.m.shot.takenAt : (r.values[mapping.takenAt ?? ""] ?? "—")}</td>
                        <td className="py-1 pr-2 text-right">{r.m.ok ? num(r.m.shot.reference.distanceM, 3) : "—"}</td>
                        <td className="py-1 pr-2 text-right">{r.m.ok ? num(r.m.shot.readings.rangesM[0], 3) : "—"}</td>
                        <td className="py-1 pr-2 text-right">{c && c.errorMm != null ? signed(c.errorMm, 2) : "—"}</td>
                        <td className="py-1 pr-2 text-right">{r.m.ok ? num(r.m.shot.reflectancePct, 0) : "—"}</td>
                        <td className="py-1" data-testid="row-problem">
                          {r.c.kind === "error" ? (
                            <span className="font-bold text-fail">✗ {r.c.errors.map((e) => e.message).join("; ")}</span>
                          ) : r.c.kind === "implausible" ? (
                            <span className="font-bold text-warn">
                              ⚠ {r.c.message}
                              {confirmed.has(r.row) ? " (confirmed)" : ""}
                            </span>
                          ) : (
                            <span className="text-pass">✓ ready</span>
                          )}
                        </td>
                      </tr>
                    );
                  })}
                </tbody>
              </table>
            </div>
            {implausible.length ? (
              <details open className="card space-y-2 border-warn" data-testid="import-implausible">
                <summary className="min-h-11 cursor-pointer font-bold text-warn">
                  ⚠ {implausible.length} {implausible.length === 1 ? "row looks" : "rows look"} implausible — mm typed as m?
                </summary>
                <p className="mt-2">
                  The range error is over a metre at a reference above 1 m: usually a millimetre column mapped as metres. Fix the unit above, or tick the rows that are right to import them anyway.
                </p>
                <p>
                  <button type="button" className="btn-secondary" onClick={() => setConfirmed(new Set([...confirmed, ...implausible.map((r) => r.row)]))}>
                    {implausible.length === 1 ? "Import it anyway" : `Import all ${implausible.length} anyway`}
                  </button>
                </p>
                <ul className="space-y-1 num">
                  {implausible.slice(0, 500).map((r) => (
                    <li key={r.row}>
                      <label className="inline-flex min-h-11 items-center gap-2">
                        <input type="checkbox" checked={confirmed.has(r.row)} onChange={(e) => toggleConfirm(r.row, e.target.checked)} />
                        Row {r.row}: {r.m.ok ? `range ${num(r.m.shot.readings.rangesM[0], 3)} m against ${num(r.m.shot.reference.distanceM, 3)} m` : ""}
                        {r.c.kind === "implausible" ? `, error ${signed(r.c.errorMm, 0)} mm` : ""} — import anyway
                      </label>
                    </li>
                  ))}
                </ul>
              </details>
            ) : null}
            {invalid.length ? (
              <details open={invalid.length <= 20} className="card">
                <summary className="min-h-11 cursor-pointer font-bold">All {invalid.length} rows with errors (they will not be imported)</summary>
                <ul className="mt-2 space-y-1" data-testid="import-row-errors">
                  {invalid.slice(0, 500).map((r) => (
                    <li key={r.row}>
                      Row {r.row}: {r.c.kind === "error" ? r.c.errors.map((e) => e.message).join("; ") : ""}
                    </li>
                  ))}
                </ul>
              </details>
            ) : null}
            {formError ? (
              <p className="field-error" role="alert">
                {formError}
              </p>
            ) : null}
            <button type="button" className="btn" onClick={() => void send()} disabled={phase === "sending"}>
              Import {valid.length} valid rows
            </button>
          </section>
        </>
      ) : null}

      {results.length || sendError ? (
        <section className="card space-y-2" aria-labelledby="h-result" aria-live="polite">
          <h2 id="h-result" className="text-2xl font-bold">
            Result
          </h2>
          {sendError ? (
            <p className="font-bold text-fail" role="alert">
              {sendError}
            </p>
          ) : null}
          <p className="text-lg" data-testid="import-result">
            {counts.accepted} imported, {counts.duplicate} already there, {counts.rejected} refused.
          </p>
          {counts.rejected ? (
            <ul>
              {results
                .filter((r) => r.status === "rejected")
                .map((r) => (
                  <li key={r.row}>
                    Row {r.row}: {r.errors.map((e) => `${e.field ? `${e.field}: ` : ""}${e.message}`).join("; ")}
                  </li>
                ))}
            </ul>
          ) : null}
          {sensorId && phase === "done" ? (
            <Link to={`/review/sensors/${sensorId}`} className="btn">
              Open the sensor's report
            </Link>
          ) : null}
        </section>
      ) : null}
    </div>
  );
}
