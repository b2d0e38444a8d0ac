// The log-shot form. Everything typed stays in the form until IndexedDB has the shot (and a
// draft survives a reload); the instant check runs the shared ranging core as you type.
import { useEffect, useMemo, useRef, useState } from "react";
import { OutboxError, saveShot, type ShotDraft } from "~/offline/outbox";
import { previewShot, type PreviewContext } from "~/offline/preview";
import type { LocalSession, LocalShot, SyncShotRecord } from "~/offline/types";
import { checkShotRecord } from "~/offline/validate";
import { isImplausible } from "~/domain/plausibility";
import { ShotFeedback, signedMm } from "./feedback";
import { errorsByField } from "./field-errors";
import { Choice, NumberField, parseList, parseNum, SelectField, fmt } from "./inputs";

type Method = "tape" | "edm" | "coordinates";
type ReadingKind = "rangesM" | "roundTripNs" | "phase";

export type ShotFormState = {
  targetId: string;
  method: Method;
  distanceM: string;
  tapeId: string;
  tapeTempC: string;
  tensionN: string;
  support: "ground" | "ends";
  spans: string;
  stationId: string;
  instrumentHeightM: string;
  targetHeightM: string;
  // issue 15 (ranging.md §7)
  edmId: string;
  refUncertaintyMm: string;
  readingKind: ReadingKind;
  ranges: string[];
  roundTrips: string[];
  phase: { frequencyHz: string; samples: string }[];
  reflectancePct: string;
  illuminanceKlux: string;
  incidenceDeg: string;
  position: NonNullable<SyncShotRecord["position"]> | null;
  note: string;
};

const s = (n: number | undefined | null) => (n == null ? "" : String(n));

function initialState(session: LocalSession, ctx: PreviewContext, existing?: LocalShot): ShotFormState {
  const freqs = ctx.sensor?.modulationHz ?? [];
  const base: ShotFormState = {
    targetId: "",
    method: ctx.tapes.length ? "tape" : "edm",
    distanceM: "",
    tapeId: ctx.tapes[0]?.id ?? "",
    tapeTempC: s(session.record.airTempC),
    tensionN: s(ctx.tapes[0]?.standardTensionN),
    support: "ground",
    spans: "1",
    stationId: ctx.site?.stations[0]?.id ?? "",
    instrumentHeightM: "",
    targetHeightM: "",
    edmId: "",
    refUncertaintyMm: "",
    readingKind: "rangesM",
    ranges: [""],
    roundTrips: [""],
    phase: freqs.map((f) => ({ frequencyHz: String(f), samples: "" })),
    reflectancePct: "",
    illuminanceKlux: s(session.illuminanceKlux),
    incidenceDeg: "",
    position: null,
    note: "",
  };
  if (!existing) return base;
  const r = existing.record;
  const rd = r.readings;
  return {
    ...base,
    targetId: r.targetId ?? "",
    method: r.reference.method,
    distanceM: s(r.reference.distanceM),
    tapeId: r.reference.tape?.tapeId ?? base.tapeId,
    tapeTempC: s(r.reference.tape?.tempC),
    tensionN: s(r.reference.tape?.tensionN),
    support: r.reference.tape?.support ?? "ground",
    spans: s(r.reference.tape?.spans ?? 1),
    stationId: r.reference.stationId ?? base.stationId,
    instrumentHeightM: s(r.reference.instrumentHeightM),
    targetHeightM: s(r.reference.targetHeightM),
    edmId: r.reference.edmId ?? "",
    refUncertaintyMm: s(r.reference.uncertaintyMm),
    readingKind: "rangesM" in rd ? "rangesM" : "roundTripNs" in rd ? "roundTripNs" : "phase",
    ranges: "rangesM" in rd ? rd.rangesM.map(String) : [""],
    roundTrips: "roundTripNs" in rd ? rd.roundTripNs.map(String) : [""],
    phase: "phase" in rd ? rd.phase.map((p) => ({ frequencyHz: String(p.frequencyHz), samples: p.samples.join(" ") })) : base.phase,
    reflectancePct: s(r.reflectancePct),
    illuminanceKlux: s(r.illuminanceKlux),
    incidenceDeg: s(r.incidenceDeg),
    position: r.position ?? null,
    note: r.note ?? "",
  };
}

export function toShotDraft(f: ShotFormState, sessionId: string, id?: string, takenAt?: string): ShotDraft {
  const num = (v: string) => parseNum(v);
  const reference: SyncShotRecord["reference"] = { method: f.method };
  if (f.method !== "coordinates") reference.distanceM = num(f.distanceM);
  if (f.method === "tape") {
    reference.tape = {
      tapeId: f.tapeId,
      tempC: num(f.tapeTempC) as number,
      tensionN: num(f.tensionN) as number,
      support: f.support,
      spans: num(f.spans) as number,
    };
  }
  if (f.method === "coordinates") {
    reference.stationId = f.stationId || undefined;
    reference.instrumentHeightM = num(f.instrumentHeightM);
    reference.targetHeightM = num(f.targetHeightM);
  }
  if (f.method === "edm" && f.edmId) reference.edmId = f.edmId;
  if (f.refUncertaintyMm.trim() !== "") reference.uncertaintyMm = num(f.refUncertaintyMm);
  const readings: SyncShotRecord["readings"] =
    f.readingKind === "rangesM"
      ? { rangesM: f.ranges.filter((x) => x.trim() !== "").map((x) => num(x) as number) }
      : f.readingKind === "roundTripNs"
        ? { roundTripNs: f.roundTrips.filter((x) => x.trim() !== "").map((x) => num(x) as number) }
        : { phase: f.phase.filter((p) => p.samples.trim() !== "").map((p) => ({ frequencyHz: Number(p.frequencyHz), samples: parseList(p.samples) })) };
  return {
    ...(id ? { id } : {}),
    ...(takenAt ? { takenAt } : {}),
    sessionId,
    targetId: f.targetId || undefined,
    reference,
    readings,
    reflectancePct: num(f.reflectancePct) as number,
    illuminanceKlux: num(f.illuminanceKlux) as number,
    incidenceDeg: num(f.incidenceDeg),
    position: f.position ?? undefined,
    note: f.note.trim() || undefined,
  };
}

/**
 * Where a draft waits in localStorage: the session's half-typed NEW shot under one key, the
 * edit of a queued shot under that shot's own key, so that saving or leaving an edit never
 * touches the new shot the crew was typing (and the other way round).
 */
export const draftKey = (sessionId: string) => `shotbook-shot-draft:${sessionId}`;
export const editDraftKey = (shotId: string) => `shotbook-shot-edit-draft:${shotId}`;

export function ShotForm({ session, ctx, existing, onSaved }: { session: LocalSession; ctx: PreviewContext; existing?: LocalShot; onSaved?: (shot: LocalShot) => void }) {
  const [f, setF] = useState<ShotFormState>(() => initialState(session, ctx, existing));
  const [dirty, setDirty] = useState(false);
  const [errors, setErrors] = useState<Record<string, string>>(() => (existing ? errorsByField(existing.errors) : {}));
  const [photo, setPhoto] = useState<File | null>(null);
  const [photoKey, setPhotoKey] = useState(0);
  const [saving, setSaving] = useState(false);
  const [saved, setSaved] = useState<LocalShot | null>(null);
  const [gps, setGps] = useState<string>("");
  /** The draft (as JSON) whose implausible error the crew has been asked to confirm. */
  const [confirming, setConfirming] = useState<string | null>(null);
  const formRef = useRef<HTMLFormElement>(null);
  const sensor = ctx.sensor;
  const site = ctx.site;

  // A draft survives a reload or a killed tab (the photo is kept only once saved).
  const myDraftKey = existing ? editDraftKey(existing.id) : draftKey(session.id);
  useEffect(() => {
    try {
      const raw = localStorage.getItem(myDraftKey);
      if (raw) {
        setF({ ...initialState(session, ctx, existing), ...(JSON.parse(raw) as Partial<ShotFormState>) });
        setDirty(true);
      }
    } catch {}
    // eslint-disable-next-line react-hooks/exhaustive-deps
  }, [myDraftKey]);
  useEffect(() => {
    if (!dirty) return;
    try {
      localStorage.setItem(myDraftKey, JSON.stringify(f));
    } catch {}
  }, [f, dirty, myDraftKey]);

  const set = <K extends keyof ShotFormState>(k: K, v: ShotFormState[K]) => {
    setF((cur) => ({ ...cur, [k]: v }));
    setDirty(true);
    setSaved(null);
    setConfirming(null);
  };

  const draft = useMemo(() => toShotDraft(f, session.id, existing?.id, existing?.record.takenAt), [f, session.id, existing]);
  const live = useMemo(() => {
    const record = { id: existing?.id ?? "00000000-0000-4000-8000-000000000000", takenAt: new Date().toISOString(), ...draft } as SyncShotRecord;
    if (checkShotRecord(record).length) return null;
    return previewShot(session.record, record, ctx);
  }, [draft, session.record, ctx, existing?.id]);

  // Coordinates: the computed distance beside the surveyed one, and what the typed heights do to it.
  const coordinates = useMemo(() => {
    if (f.method !== "coordinates" || !live?.ok) return null;
    const target = site?.targets.find((t) => t.id === f.targetId);
    const base = { id: "00000000-0000-4000-8000-000000000000", takenAt: new Date().toISOString(), ...draft } as SyncShotRecord;
    const flat = previewShot(session.record, { ...base, reference: { ...base.reference, instrumentHeightM: 0, targetHeightM: 0 } }, ctx);
    return {
      computedM: live.preview.referenceM,
      surveyedM: target?.referenceM ?? null,
      heightsMm: flat.ok ? (live.preview.referenceM - flat.preview.referenceM) * 1000 : null,
      limitMm: live.preview.limitMm,
    };
  }, [f.method, f.targetId, live, site, draft, session.record, ctx]);

  function pickTarget(id: string) {
    const t = site?.targets.find((x) => x.id === id);
    setConfirming(null);
    setF((cur) => ({
      ...cur,
      targetId: id,
      reflectancePct: t ? String(t.reflectancePct) : cur.reflectancePct,
      distanceM: t?.referenceM != null && cur.method !== "coordinates" ? String(t.referenceM) : cur.distanceM,
    }));
    setDirty(true);
    setSaved(null);
  }

  function pickTape(id: string) {
    const t = ctx.tapes.find((x) => x.id === id);
    setF((cur) => ({ ...cur, tapeId: id, tensionN: t ? String(t.standardTensionN) : cur.tensionN }));
    setDirty(true);
  }

  function locate() {
    if (!("geolocation" in navigator)) {
      setGps("This browser gives no GPS fix.");
      return;
    }
    setGps("Waiting for a GPS fix…");
    navigator.geolocation.getCurrentPosition(
      (p) => {
        set("position", { lat: p.coords.latitude, lon: p.coords.longitude, accuracyM: p.coords.accuracy });
        setGps("");
      },
      (e) => setGps(e.code === e.PERMISSION_DENIED ? "GPS refused: allow location for this site in the browser settings." : "No GPS fix yet: try again in the open."),
      { enableHighAccuracy: true, timeout: 20_000, maximumAge: 10_000 },
    );
  }

  function focusFirstError(errs: Record<string, string>) {
    requestAnimationFrame(() => {
      const el = formRef.current?.querySelector<HTMLElement>("[aria-invalid='true']");
      el?.focus();
      if (!el && errs.form) formRef.current?.querySelector<HTMLElement>("#shot-form-error")?.focus();
    });
  }

  const implausible = live?.ok ? isImplausible(live.preview.errorMm, live.preview.referenceM) : false;

  async function onSubmit(e: { preventDefault(): void }, confirmed = false) {
    e.preventDefault();
    if (saving) return;
    setSaved(null);
    // ranging.md §9: an error over a metre at a real distance is most often a unit slip
    // (2.0016 typed for 20.016). Ask before saving; the crew may still save it on purpose.
    const key = JSON.stringify(draft);
    if (implausible && !(confirmed && confirming === key)) {
      setConfirming(key);
      requestAnimationFrame(() => formRef.current?.querySelector<HTMLElement>("#implausible-confirm")?.focus());
      return;
    }
    const record = { id: existing?.id ?? "00000000-0000-4000-8000-000000000000", takenAt: new Date().toISOString(), ...draft } as SyncShotRecord;
    const local = checkShotRecord(record);
    if (local.length) {
      const errs = errorsByField(local);
      setErrors(errs);
      focusFirstError(errs);
      return;
    }
    setSaving(true);
    try {
      const row = await saveShot(draft, photo ? { blob: photo, name: photo.name } : null, ctx);
      setErrors({});
      setSaved(row);
      setDirty(false);
      setConfirming(null);
      try {
        localStorage.removeItem(myDraftKey);
      } catch {}
      if (!existing) {
        // Ready for the next shot: keep how the distance is measured and the light, clear the rest.
        setF((cur) => ({
          ...cur,
          targetId: "",
          distanceM: "",
          ranges: [""],
          roundTrips: [""],
          phase: cur.phase.map((p) => ({ ...p, samples: "" })),
          reflectancePct: "",
          incidenceDeg: "",
          position: null,
          note: "",
        }));
        setPhoto(null);
        setPhotoKey((k) => k + 1);
      }
      onSaved?.(row);
    } catch (err) {
      if (err instanceof OutboxError) {
        const errs = errorsByField(err.errors);
        setErrors(errs);
        focusFirstError(errs);
      } else {
        setErrors({ form: `Not saved: ${err instanceof Error ? err.message : String(err)}. What you typed is still here.` });
      }
    } finally {
      setSaving(false);
    }
  }

  const targetOptions = (site?.targets ?? []).map((t) => ({
    value: t.id,
    label: `${t.label} — ${fmt(t.reflectancePct, 0)} %${t.retro ? " retro" : ""}${t.referenceM != null ? `, ${fmt(t.referenceM, 3)} m` : ""}`,
  }));
  const kinds: { value: ReadingKind; label: string }[] =
    sensor?.kind === "cw"
      ? [
          { value: "rangesM", label: "Ranges (m)" },
          { value: "phase", label: "Correlation samples" },
        ]
      : [
          { value: "rangesM", label: "Ranges (m)" },
          { value: "roundTripNs", label: "Round-trip times (ns)" },
        ];

  const listField = (key: "ranges" | "roundTrips", prefix: string, path: "readings.rangesM" | "readings.roundTripNs", label: string, unit: string) => (
    <div className="space-y-3">
      {f[key].map((v, i) => (
        <div key={i} className="flex items-end gap-2">
          <div className="flex-1">
            <NumberField
              id={`f-${prefix}-${i}`}
              label={`${label}${f[key].length > 1 ? ` ${i + 1}` : ""} (${unit})`}
              unit={unit}
              value={v}
              required
              error={errors[`${path}.${i}`]}
              onChange={(nv) =>
                set(
                  key,
                  f[key].map((x, j) => (j === i ? nv : x)),
                )
              }
            />
          </div>
          {f[key].length > 1 ? (
            <button
              type="button"
              className="btn-secondary"
              aria-label={`Remove ${label.toLowerCase()} ${i + 1}`}
              onClick={() =>
                set(
                  key,
                  f[key].filter((_, j) => j !== i),
                )
              }
            >
              ✕
            </button>
          ) : null}
        </div>
      ))}
      <button type="button" className="btn-secondary" onClick={() => set(key, [...f[key], ""])}>
        + Add a reading
      </button>
    </div>
  );

  return (
    <form ref={formRef} onSubmit={onSubmit} noValidate data-dirty={dirty ? "true" : "false"} aria-label={existing ? "Fix shot" : "Log shot"} className="space-y-6">
      {errors.form ? (
        <p id="shot-form-error" tabIndex={-1} className="field-error text-base" role="alert">
          {errors.form}
        </p>
      ) : null}

      {/* Landscape: the form left, the check and Save pinned right. Portrait: one column in which
          the check sits directly under the readings it judges (the wrappers step aside with
          display: contents and `order` places each card), and Save closes the form. */}
      <div className="grid gap-6 landscape:lg:grid-cols-[minmax(0,1fr)_23rem] landscape:lg:items-start">
        <div className="contents landscape:lg:block landscape:lg:space-y-6">
          <section className="card order-1 space-y-4">
            <h2 className="text-xl font-bold">Target and reference distance</h2>
            <SelectField
              id="f-target"
              label="Target"
              value={f.targetId}
              onChange={pickTarget}
              options={targetOptions}
              placeholder="— no target from the site —"
              error={errors["targetId"]}
              optional={f.method !== "coordinates"}
            />
            <Choice
              name="f-method"
              legend="How the reference distance was measured"
              value={f.method}
              onChange={(v) => set("method", v)}
              error={errors["reference.method"]}
              options={[
                { value: "tape", label: "Steel tape" },
                { value: "edm", label: "EDM" },
                { value: "coordinates", label: "Coordinates" },
              ]}
            />
            {f.method !== "coordinates" ? (
              <NumberField
                id="f-distance"
                label="Reference distance (m)"
                unit="m"
                value={f.distanceM}
                required
                onChange={(v) => set("distanceM", v)}
                error={errors["reference.distanceM"]}
                hint={f.method === "tape" ? "As read on the tape; the corrections below are applied to it." : undefined}
              />
            ) : null}
            {f.method === "tape" ? (
              <div className="grid gap-4 sm:grid-cols-2">
                <SelectField
                  id="f-tape"
                  label="Tape"
                  value={f.tapeId}
                  onChange={pickTape}
                  options={ctx.tapes.map((t) => ({ value: t.id, label: t.label }))}
                  placeholder={ctx.tapes.length ? undefined : "— no tapes on this tablet —"}
                  error={errors["reference.tape.tapeId"]}
                />
                <NumberField id="f-tapeTemp" label="Tape temperature (°C)" unit="°C" value={f.tapeTempC} required onChange={(v) => set("tapeTempC", v)} error={errors["reference.tape.tempC"]} />
                <NumberField id="f-tension" label="Pull (N)" unit="N" value={f.tensionN} required onChange={(v) => set("tensionN", v)} error={errors["reference.tape.tensionN"]} />
                <NumberField id="f-spans" label="Spans" unit="spans" inputMode="numeric" value={f.spans} required onChange={(v) => set("spans", v)} error={errors["reference.tape.spans"]} />
                <div className="sm:col-span-2">
                  <Choice
                    name="f-support"
                    legend="Tape support"
                    value={f.support}
                    onChange={(v) => set("support", v)}
                    error={errors["reference.tape.support"]}
                    options={[
                      { value: "ground", label: "Lying on the ground" },
                      { value: "ends", label: "Held at the ends (sag)" },
                    ]}
                  />
                </div>
              </div>
            ) : null}
            {f.method === "coordinates" ? (
              <div className="grid gap-4 sm:grid-cols-3">
                <SelectField
                  id="f-station"
                  label="Station (sensor stands on)"
                  value={f.stationId}
                  onChange={(v) => set("stationId", v)}
                  options={(site?.stations ?? []).map((st) => ({ value: st.id, label: st.label }))}
                  placeholder={site?.stations.length ? undefined : "— no stations at this site —"}
                  error={errors["reference.stationId"]}
                />
                <NumberField
                  id="f-ih"
                  label="Instrument height (m)"
                  unit="m"
                  value={f.instrumentHeightM}
                  required
                  onChange={(v) => set("instrumentHeightM", v)}
                  error={errors["reference.instrumentHeightM"]}
                />
                <NumberField id="f-th" label="Target height (m)" unit="m" value={f.targetHeightM} required onChange={(v) => set("targetHeightM", v)} error={errors["reference.targetHeightM"]} />
                <p className="text-muted sm:col-span-3">
                  The distance comes from the surveyed positions of the station and the target. The registry does not record whether a target's surveyed height is its board centre: if it is, the
                  target height here is 0.
                </p>
                {coordinates ? (
                  <div className="num space-y-1 sm:col-span-3" data-testid="coordinates-check">
                    <p>
                      Computed from the coordinates: <strong>{fmt(coordinates.computedM, 4)} m</strong>
                      {coordinates.surveyedM != null ? (
                        <>
                          {" "}
                          · surveyed station-to-target distance in the registry: <strong>{fmt(coordinates.surveyedM, 4)} m</strong> (difference{" "}
                          {signedMm((coordinates.computedM - coordinates.surveyedM) * 1000)})
                        </>
                      ) : (
                        " · the registry has no surveyed distance for this target"
                      )}
                    </p>
                    {coordinates.heightsMm != null && Math.abs(coordinates.heightsMm) > coordinates.limitMm ? (
                      <p className="flex items-center gap-2 font-bold text-warn" role="alert" data-testid="heights-warning">
                        The heights typed change the distance by {signedMm(coordinates.heightsMm)}, more than the ±{fmt(coordinates.limitMm, 1)} mm limit: check they are measured from the same points
                        as the site's survey.
                      </p>
                    ) : null}
                  </div>
                ) : null}
              </div>
            ) : null}
            {f.method === "edm" ? (
              <SelectField
                id="f-edm"
                label="Reference EDM"
                value={f.edmId}
                onChange={(v) => set("edmId", v)}
                options={(ctx.edms ?? []).map((e) => ({ value: e.id, label: `${e.label} (${e.serial}) — ${e.uncertaintyMm} mm + ${e.uncertaintyPpm} ppm` }))}
                placeholder="— not listed: the project's EDM figure —"
                error={errors["reference.edmId"]}
                optional
              />
            ) : null}
            <NumberField
              id="f-ref-u"
              label="Reference uncertainty (mm)"
              unit="mm"
              value={f.refUncertaintyMm}
              onChange={(v) => set("refUncertaintyMm", v)}
              error={errors["reference.uncertaintyMm"]}
              hint="Standard uncertainty (k = 1) of this reference distance, when known; empty takes it from the tape's certificate, the surveyed points or the EDM."
            />
          </section>

          <section className="card order-2 space-y-4">
            <h2 className="text-xl font-bold">Sensor readings</h2>
            <Choice name="f-kind" legend="The sensor gives" value={f.readingKind} onChange={(v) => set("readingKind", v)} options={kinds} />
            {f.readingKind === "rangesM" ? listField("ranges", "range", "readings.rangesM", "Sensor range", "m") : null}
            {f.readingKind === "roundTripNs" ? listField("roundTrips", "rtt", "readings.roundTripNs", "Round-trip time", "ns") : null}
            {f.readingKind === "phase" ? (
              <div className="space-y-3">
                {f.phase.length === 0 ? <p className="field-error">This sensor has no modulation frequencies in the registry.</p> : null}
                {f.phase.map((p, i) => (
                  <div key={i}>
                    <label htmlFor={`f-phase-${i}`} className="field-label">
                      Correlation samples at {fmt(Number(p.frequencyHz) / 1e6, 3)} MHz
                    </label>
                    <textarea
                      id={`f-phase-${i}`}
                      className="input num"
                      rows={2}
                      inputMode="decimal"
                      value={p.samples}
                      aria-invalid={errors[`readings.phase.${i}`] ? true : undefined}
                      aria-describedby={`f-phase-${i}-hint${errors[`readings.phase.${i}`] ? ` f-phase-${i}-error` : ""}`}
                      onChange={(e) =>
                        set(
                          "phase",
                          f.phase.map((x, j) => (j === i ? { ...x, samples: e.target.value } : x)),
                        )
                      }
                    />
                    <p id={`f-phase-${i}-hint`} className="mt-1 text-sm text-muted">
                      Equally spaced samples over one period, separated by spaces or commas (decimals with a point).
                    </p>
                    {errors[`readings.phase.${i}`] ? (
                      <p id={`f-phase-${i}-error`} className="field-error" role="alert">
                        {errors[`readings.phase.${i}`]}
                      </p>
                    ) : null}
                  </div>
                ))}
              </div>
            ) : null}
          </section>

          <section className="card order-4 grid gap-4 sm:grid-cols-3">
            <h2 className="text-xl font-bold sm:col-span-3">Target and light</h2>
            <NumberField id="f-reflectance" label="Reflectance (%)" unit="%" value={f.reflectancePct} required onChange={(v) => set("reflectancePct", v)} error={errors["reflectancePct"]} />
            <NumberField
              id="f-illuminance"
              label="Illuminance (klux)"
              unit="klux"
              value={f.illuminanceKlux}
              required
              onChange={(v) => set("illuminanceKlux", v)}
              error={errors["illuminanceKlux"]}
              hint={session.sky ? `Session sky: ${session.sky}` : undefined}
            />
            <NumberField id="f-incidence" label="Incidence angle (°)" unit="°" value={f.incidenceDeg} onChange={(v) => set("incidenceDeg", v)} error={errors["incidenceDeg"]} />
          </section>

          <section className="card order-5 grid gap-4 sm:grid-cols-2">
            <div>
              <p className="field-label" id="f-gps-label">
                GPS fix <span className="font-normal text-muted">(optional)</span>
              </p>
              <div className="flex flex-wrap items-center gap-2">
                <button type="button" id="f-gps" className="btn-secondary" onClick={locate} aria-describedby="f-gps-label f-gps-state">
                  Get GPS fix
                </button>
                {f.position ? (
                  <button type="button" className="btn-secondary" onClick={() => set("position", null)}>
                    Clear
                  </button>
                ) : null}
              </div>
              <p id="f-gps-state" className="num mt-1" aria-live="polite">
                {f.position ? `${fmt(f.position.lat, 6)}°, ${fmt(f.position.lon, 6)}°${f.position.accuracyM != null ? ` ± ${fmt(f.position.accuracyM, 0)} m` : ""}` : gps || "No fix taken."}
              </p>
              {errors["position"] ? (
                <p className="field-error" role="alert">
                  {errors["position"]}
                </p>
              ) : null}
            </div>
            <div>
              <label htmlFor="f-photo" className="field-label">
                Photo <span className="font-normal text-muted">(optional)</span>
              </label>
              <input
                key={photoKey}
                id="f-photo"
                name="photo"
                type="file"
                accept="image/*"
                capture="environment"
                className="input"
                onChange={(e) => {
                  setPhoto(e.target.files?.[0] ?? null);
                  setDirty(true);
                }}
              />
              {photo ? (
                <p className="mt-1 text-sm">
                  {photo.name} · {fmt(photo.size / 1024, 0)} KB, kept with the shot
                </p>
              ) : null}
              {errors["file"] ? (
                <p className="field-error" role="alert">
                  {errors["file"]}
                </p>
              ) : null}
            </div>
            <div className="sm:col-span-2">
              <label htmlFor="f-note" className="field-label">
                Note <span className="font-normal text-muted">(optional)</span>
              </label>
              <textarea id="f-note" className="input" rows={2} value={f.note} onChange={(e) => set("note", e.target.value)} aria-invalid={errors["note"] ? true : undefined} />
              {errors["note"] ? (
                <p className="field-error" role="alert">
                  {errors["note"]}
                </p>
              ) : null}
            </div>
          </section>
        </div>

        {/* The check and Save stay in view while typing: beside the readings in landscape (pinned as
          the form scrolls); in portrait the check under the readings, Save at the end. */}
        <div className="contents landscape:lg:sticky landscape:lg:top-2 landscape:lg:block landscape:lg:space-y-4">
          <div className="order-3 space-y-4" data-testid="shot-check-panel" role="region" aria-label="Instant check">
            <section className="card" aria-live="polite">
              {saved?.preview ? (
                <ShotFeedback preview={saved.preview} title="Saved shot" compact />
              ) : live?.ok ? (
                <ShotFeedback preview={live.preview} compact implausible={implausible} />
              ) : live && !live.ok ? (
                <p className="font-bold text-warn">{live.message}</p>
              ) : (
                <p className="text-muted">Enter the reference distance, a sensor reading, reflectance and illuminance to see the range error here.</p>
              )}
            </section>

            {confirming !== null && confirming === JSON.stringify(draft) && live?.ok ? (
              <div id="implausible-confirm" tabIndex={-1} role="alert" className="card space-y-3 border-warn" data-testid="implausible-confirm">
                <p className="text-lg font-bold">
                  Check the reading: the error is {signedMm(live.preview.errorMm)} ({fmt(live.preview.errorMm / 1000, 3)} m) at {fmt(live.preview.referenceM, 3)} m.
                </p>
                <p>Was a value typed in the wrong unit (mm typed as m?) or a digit left out? Nothing is saved yet.</p>
                <div className="flex flex-wrap gap-3">
                  <button
                    type="button"
                    className="btn-secondary"
                    onClick={() => {
                      setConfirming(null);
                      formRef.current?.querySelector<HTMLElement>("#f-range-0, #f-rtt-0, #f-phase-0")?.focus();
                    }}
                  >
                    Correct the reading
                  </button>
                  <button type="button" className="btn" onClick={(e) => void onSubmit(e, true)}>
                    Save anyway
                  </button>
                </div>
              </div>
            ) : null}
          </div>

          <div className="order-6 flex flex-wrap items-center gap-4">
            <button type="submit" className="btn min-h-14 px-8 text-xl" disabled={saving}>
              {saving ? "Saving…" : existing ? "Save and resend" : "Save shot"}
            </button>
            <p role="status" className="text-lg font-bold" data-testid="save-status">
              {saved ? (existing ? "Saved. It goes out with the next sync." : "Saved on this tablet. It goes out with the next sync.") : ""}
            </p>
          </div>
        </div>
      </div>
    </form>
  );
}
