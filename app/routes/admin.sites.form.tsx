// The site form with repeatable station and target rows (Conform list intents), shared by
// /admin/sites/new and /admin/sites/:siteId (not a route itself).
import { getFormProps, getInputProps, useForm, type FieldMetadata, type SubmissionResult } from "@conform-to/react";
import { Form, useNavigation } from "react-router";
import { Checkbox, Field, FieldErrors, FormSummary, NumberField, TextArea, countFieldErrors } from "~/components/forms";
import { parseRegistryForm, siteSchema, type SiteInput } from "~/contract/registry";

type Pos = { gridE: number | null; gridN: number | null; gridH: number | null; lat: number | null; lon: number | null; h: number | null };
const s = (v: number | null | undefined) => (v === null || v === undefined ? "" : String(v));
const posDefaults = (r: Pos) => ({ grid: { e: s(r.gridE), n: s(r.gridN), h: s(r.gridH) }, geo: { lat: s(r.lat), lon: s(r.lon), h: s(r.h) } });

export type TargetDefaultsRow = Pos & { id: string; label: string; reflectancePct: number; retro: boolean; referenceM: number | null; sigmaMm?: number | null };
export type StationDefaultsRow = Pos & { id: string; label: string; sigmaMm?: number | null };

export function targetDefault(t: TargetDefaultsRow) {
  return { id: t.id, label: t.label, reflectancePct: String(t.reflectancePct), retro: t.retro ? "on" : "", referenceM: s(t.referenceM), sigmaMm: s(t.sigmaMm ?? null), ...posDefaults(t) };
}
export function stationDefault(r: StationDefaultsRow) {
  return { id: r.id, label: r.label, sigmaMm: s(r.sigmaMm ?? null), ...posDefaults(r) };
}

export function siteDefaults(r?: {
  name: string;
  lat: number | null;
  lon: number | null;
  notes: string;
  targets: (TargetDefaultsRow & { retiredAt: string | null })[];
  stations: (StationDefaultsRow & { retiredAt: string | null })[];
}): Record<string, unknown> {
  if (!r) return { targets: [{}], stations: [] };
  return {
    name: r.name,
    lat: s(r.lat),
    lon: s(r.lon),
    notes: r.notes,
    targets: r.targets.filter((t) => !t.retiredAt).map(targetDefault),
    stations: r.stations.filter((x) => !x.retiredAt).map(stationDefault),
  };
}

// eslint-disable-next-line @typescript-eslint/no-explicit-any
type Meta = FieldMetadata<any, any, any>;
// eslint-disable-next-line @typescript-eslint/no-explicit-any
type ObjMeta = FieldMetadata<Record<string, unknown> | undefined, any, any>;

function hasAny(meta: Meta) {
  const v = meta.value as Record<string, unknown> | undefined;
  const errs = Object.keys((meta.allErrors ?? {}) as object).length > 0;
  return errs || (v && typeof v === "object" && Object.values(v).some((x) => typeof x === "string" && x.trim() !== ""));
}

/** Surveyed position of a row: local grid and/or WGS 84, folded away until needed. */
function Coordinates({ grid, geo, what }: { grid: ObjMeta; geo: ObjMeta; what: string }) {
  const g = grid.getFieldset();
  const p = geo.getFieldset();
  return (
    <details className="sm:col-span-full rounded-md border-2 border-line p-3" open={Boolean(hasAny(grid) || hasAny(geo))}>
      <summary className="flex min-h-11 cursor-pointer items-center font-bold">Surveyed coordinates of {what} (optional)</summary>
      <p className="mb-2 text-sm text-muted">Fill all three boxes of a line or leave the line empty.</p>
      <fieldset className="grid gap-3 sm:grid-cols-3">
        <legend className="mb-1 font-bold">Local grid</legend>
        <NumberField meta={g.e} label="Easting" unit="m" />
        <NumberField meta={g.n} label="Northing" unit="m" />
        <NumberField meta={g.h} label="Height" unit="m" />
      </fieldset>
      <fieldset className="mt-3 grid gap-3 sm:grid-cols-3">
        <legend className="mb-1 font-bold">WGS 84</legend>
        <NumberField meta={p.lat} label="Latitude" unit="°" hint="North positive." />
        <NumberField meta={p.lon} label="Longitude" unit="°" hint="East positive." />
        <NumberField meta={p.h} label="Ellipsoidal height" unit="m" />
      </fieldset>
    </details>
  );
}

export function SiteForm({
  lastResult,
  defaultValue,
  submitLabel,
  retiredTargets = [],
}: {
  lastResult: SubmissionResult<string[]> | null | undefined;
  defaultValue: Record<string, unknown>;
  submitLabel: string;
  retiredTargets?: TargetDefaultsRow[];
}) {
  const navigation = useNavigation();
  const busy = navigation.state !== "idle" && navigation.formMethod === "POST";
  const [form, fields] = useForm<SiteInput>({
    id: "site-form",
    lastResult,
    defaultValue: defaultValue as never,
    shouldValidate: "onSubmit",
    shouldRevalidate: "onInput",
    onValidate: ({ formData }) => parseRegistryForm(formData, siteSchema),
  });
  const stations = fields.stations.getFieldList();
  const targets = fields.targets.getFieldList();
  const shownIds = new Set(targets.map((t) => t.getFieldset().id.value));

  return (
    <Form method="post" {...getFormProps(form)} className="space-y-6">
      <FormSummary errors={form.errors} fieldErrorCount={countFieldErrors(form.allErrors)} />

      <section className="card grid gap-4 sm:grid-cols-2">
        <h2 className="text-xl font-bold sm:col-span-2">Site</h2>
        <Field className="sm:col-span-2" meta={fields.name} label="Name" hint="A test range or baseline, e.g. “Yard baseline”." />
        <NumberField meta={fields.lat} label="Latitude (for the map)" unit="°" hint="Optional, WGS 84, north positive." />
        <NumberField meta={fields.lon} label="Longitude (for the map)" unit="°" hint="Optional, WGS 84, east positive." />
        <TextArea className="sm:col-span-2" meta={fields.notes} label="Notes" hint="Access, traffic control, where the targets stand." />
      </section>

      <section className="space-y-3" aria-labelledby="stations-heading">
        <h2 id="stations-heading" className="text-2xl font-bold">
          Stations <span className="text-base font-normal text-muted">({stations.length})</span>
        </h2>
        <p className="text-muted">Where the sensor stands. Needed for reference distances from coordinates; the first is the main station.</p>
        {stations.length === 0 ? <p>No stations.</p> : null}
        {stations.map((row, i) => {
          const f = row.getFieldset();
          const { key: idKey, ...idProps } = getInputProps(f.id, { type: "hidden" });
          return (
            <fieldset key={row.key} className="card grid gap-4 sm:grid-cols-3" data-testid={`station-row-${i}`}>
              <legend className="sr-only">Station {i + 1}</legend>
              <div className="flex flex-wrap items-center gap-3 sm:col-span-3">
                <h3 className="text-xl font-bold">Station {i + 1}</h3>
                <button className="btn-secondary ml-auto" {...form.remove.getButtonProps({ name: fields.stations.name, index: i })}>
                  Remove station {i + 1}
                </button>
              </div>
              <input key={idKey} {...idProps} />
              <FieldErrors id={f.id.errorId} errors={(f.id.errors as string[] | undefined) ?? []} />
              <Field meta={f.label} label="Label" hint="e.g. S1" />
              <NumberField meta={f.sigmaMm} label="Survey uncertainty σ" unit="mm" hint="1-D standard uncertainty of the point; empty = unknown." />
              <Coordinates grid={f.grid as unknown as ObjMeta} geo={f.geo as unknown as ObjMeta} what={`station ${i + 1}`} />
            </fieldset>
          );
        })}
        <button className="btn-secondary" {...form.insert.getButtonProps({ name: fields.stations.name })}>
          + Add a station
        </button>
      </section>

      <section className="space-y-3" aria-labelledby="targets-heading">
        <h2 id="targets-heading" className="text-2xl font-bold">
          Targets <span className="text-base font-normal text-muted">({targets.length})</span>
        </h2>
        <p className="text-muted">Boards of known reflectance: dark about 10 %, grey about 50 %, white 80–90 %.</p>
        <FieldErrors id={fields.targets.errorId} errors={(fields.targets.errors as string[] | undefined) ?? []} />
        {targets.map((row, i) => {
          const f = row.getFieldset();
          const { key: idKey, ...idProps } = getInputProps(f.id, { type: "hidden" });
          return (
            <fieldset key={row.key} className="card grid gap-4 sm:grid-cols-3" data-testid={`target-row-${i}`}>
              <legend className="sr-only">Target {i + 1}</legend>
              <div className="flex flex-wrap items-center gap-3 sm:col-span-3">
                <h3 className="text-xl font-bold">Target {i + 1}</h3>
                <button className="btn-secondary ml-auto" {...form.remove.getButtonProps({ name: fields.targets.name, index: i })}>
                  Remove target {i + 1}
                </button>
              </div>
              <input key={idKey} {...idProps} />
              <FieldErrors id={f.id.errorId} errors={(f.id.errors as string[] | undefined) ?? []} />
              <Field meta={f.label} label="Label" hint="e.g. T10-dark" />
              <NumberField meta={f.reflectancePct} label="Reflectance" unit="%" hint="0 to 100 %." />
              <NumberField meta={f.referenceM} label="Reference distance" unit="m" hint="From the main station, when surveyed." />
              <NumberField meta={f.sigmaMm} label="Survey uncertainty σ" unit="mm" hint="1-D standard uncertainty of the point; empty = unknown." />
              <Checkbox className="sm:col-span-3" meta={f.retro} label="Retro-reflective (prism or reflective sheeting)" />
              <Coordinates grid={f.grid as unknown as ObjMeta} geo={f.geo as unknown as ObjMeta} what={`target ${i + 1}`} />
            </fieldset>
          );
        })}
        <button className="btn-secondary" {...form.insert.getButtonProps({ name: fields.targets.name })}>
          + Add a target
        </button>
        {retiredTargets.filter((t) => !shownIds.has(t.id)).length ? (
          <div className="card space-y-2">
            <h3 className="text-lg font-bold">Retired targets (kept for the shots that refer to them)</h3>
            <ul className="flex flex-wrap gap-2">
              {retiredTargets
                .filter((t) => !shownIds.has(t.id))
                .map((t) => (
                  <li key={t.id}>
                    <button className="btn-secondary" {...form.insert.getButtonProps({ name: fields.targets.name, defaultValue: targetDefault(t) as never })}>
                      Bring back “{t.label}”
                    </button>
                  </li>
                ))}
            </ul>
          </div>
        ) : null}
      </section>

      <button type="submit" className="btn" disabled={busy}>
        {busy ? "Saving…" : submitLabel}
      </button>
    </Form>
  );
}
