// The log-shot form. Everything typed stays in the form until IndexedDB has the shot (and a
// draft survives a reload); the instant check runs the shared ranging core as you type.
import { useEffect, useMemo, useRef, useState } from "react";
import { OutboxError, saveShot } from "~/offline/outbox";
import { previewShot, type PreviewContext } from "~/offline/preview";
import type { LocalSession, LocalShot, SyncShotRecord } from "~/offline/types";
import { checkShotRecord } from "~/offline/validate";
import { isImplausible } from "~/domain/plausibility";
import { ShotFeedback, signedMm } from "./feedback";
import { errorsByField } from "./field-errors";
import { NumberField, fmt } from "./inputs";
import { draftKey, editDraftKey, initialState, toShotDraft, type SetField, type ShotFormState } from "./shot-form-state";
import { ReferenceCard } from "./shot-form-reference";
import { ReadingsCard } from "./shot-form-readings";

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

  const set: SetField = (k, v) => {
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
          <ReferenceCard f={f} set={set} errors={errors} ctx={ctx} coordinates={coordinates} pickTarget={pickTarget} pickTape={pickTape} />

          <ReadingsCard f={f} set={set} errors={errors} ctx={ctx} />

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
