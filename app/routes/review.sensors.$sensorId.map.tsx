import { lazy, Suspense, useEffect, useMemo, useState } from "react";
import { Link, useSearchParams } from "react-router";
import type { Feature, FeatureCollection, Point } from "geojson";
import type { Route } from "./+types/review.sensors.$sensorId.map";
import { ALL } from "~/auth/access";
import { requireRole } from "~/auth/guards.server";
import { publicEnv } from "~/env.server";
import { reviewSiteFeatures, sensorReviewHeader } from "~/models/review.server";
import { autoCellSideM, DIVERGING, hexBins, scaleMaxMm } from "~/components/review/map-style";
import { defaultSite, sessionSites, siteBounds, siteChoices, siteOfShot } from "~/components/review/map-sites";
import { LegendSwatch } from "~/components/review/charts";
import { bandWord, dateOnly, mm, mmSigned, metres } from "~/components/review/format";
import { LocalTime } from "~/components/review/local-time";
import { WithinWord } from "~/components/review/shot-table";
import { reflectanceClass } from "~/domain";
import type { ReportJson } from "~/components/review/types";

/**
 * issue 16: the most shots the map asks for. Beyond, the server sends every notable shot
 * (excluded, outside, flagged) and a fixed sample of the others, and says how many there are.
 */
export const MAP_MAX_SHOTS = 5000;

// MapLibre is loaded only here, and only in the browser.
const RangeMap = lazy(() => import("~/components/review/range-map"));

export const meta: Route.MetaFunction = ({ data }) => [{ title: `${data?.sensor.label ?? "Sensor"} — range-error map · Shotbook` }];

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireRole(request, ALL);
  const head = await sensorReviewHeader(user, params.sensorId);
  if (!head) throw new Response("There is no sensor with this id.", { status: 404 });
  const site = await reviewSiteFeatures(user, params.sensorId);
  return { sensor: head.sensor, sessions: head.sessions, site, basemapUrl: publicEnv().basemapStyleUrl };
}

type ShotProps = { id: string; errorMm: number; limitMm: number; within: boolean; outside: 0 | 1; sessionId: string | null; referenceM: number | null; excluded: boolean };
/** What the shot panel shows, from the GeoJSON feature's own properties. */
type ShotInfo = { takenAt: string | null; rangeM: number | null; targetLabel: string | null; reflectancePct: number | null; illuminanceKlux: number | null; flags: string[]; photoIds: string[] };
type ShotCollection = FeatureCollection<Point> & { total?: number; sampled?: boolean };

function rangeBandOfLabel(d: number, labels: string[]): string | null {
  for (const l of labels) {
    const m = /^(\d+(?:\.\d+)?)-(\d+(?:\.\d+)?)$/.exec(l);
    if (m && d >= Number(m[1]) && d < Number(m[2])) return l;
    const p = /^(\d+(?:\.\d+)?)\+$/.exec(l);
    if (p && d >= Number(p[1])) return l;
  }
  return null;
}

export default function ReviewMap({ loaderData }: Route.ComponentProps) {
  const { sensor, sessions, site: siteFc, basemapUrl } = loaderData;
  // Filters start from the address (a link from the report carries its session) and then live
  // in the page: changing one redraws the map without asking the server.
  const [sp] = useSearchParams();
  // site: null until the QA lead picks one (the map then opens on the site with the most shots),
  // "" for all sites.
  const [filters, setFilters] = useState(() => ({
    site: sp.has("site") ? (sp.get("site") === "all" ? "" : sp.get("site")) : null,
    session: sp.get("session") ?? "",
    band: sp.get("band") ?? "",
    refl: sp.get("refl") ?? "",
    hex: sp.get("hex") === "1",
  }));
  const { session, band, refl, hex } = filters;
  const [useBasemap, setUseBasemap] = useState(false);
  const [mounted, setMounted] = useState(false);
  const [geo, setGeo] = useState<ShotCollection | null>(null);
  const [report, setReport] = useState<Omit<ReportJson, "shots"> | null>(null);
  const [error, setError] = useState<string | null>(null);
  const [selected, setSelected] = useState<string | null>(null);

  useEffect(() => setMounted(true), []);
  useEffect(() => {
    const ac = new AbortController();
    const get = async <T,>(url: string) => {
      const r = await fetch(url, { signal: ac.signal, headers: { Accept: "application/json" } });
      if (!r.ok) throw new Error(`${url} answered ${r.status}`);
      return (await r.json()) as T;
    };
    // issue 16: bounded at any number of shots: the report without rows (its range bands) and
    // at most MAP_MAX_SHOTS located shots, each carrying what the shot panel shows
    Promise.all([
      get<ShotCollection>(`/api/shots.geojson?sensor=${encodeURIComponent(sensor.id)}&max=${MAP_MAX_SHOTS}`),
      get<Omit<ReportJson, "shots">>(`/api/sensors/${encodeURIComponent(sensor.id)}/report`),
    ])
      .then(([g, r]) => {
        setGeo(g);
        setReport(r);
      })
      .catch((e: unknown) => !ac.signal.aborted && setError(e instanceof Error ? e.message : String(e)));
    return () => ac.abort();
  }, [sensor.id]);

  const info = useMemo(() => {
    const m = new Map<string, ShotInfo>();
    for (const f of geo?.features ?? []) {
      const p = (f.properties ?? {}) as Record<string, unknown>;
      const num = (v: unknown) => (typeof v === "number" ? v : null);
      m.set(String(p.id ?? f.id ?? ""), {
        takenAt: typeof p.takenAt === "string" ? p.takenAt : null,
        rangeM: num(p.rangeM),
        targetLabel: typeof p.targetLabel === "string" ? p.targetLabel : null,
        reflectancePct: num(p.reflectancePct),
        illuminanceKlux: num(p.illuminanceKlux),
        flags: Array.isArray(p.flags) ? (p.flags as string[]) : [],
        photoIds: Array.isArray(p.photoIds) ? (p.photoIds as string[]) : [],
      });
    }
    return m;
  }, [geo]);
  const bandLabels = useMemo(() => (report?.byRange ?? []).map((b) => b.band), [report]);
  const bySession = useMemo(() => sessionSites(sessions), [sessions]);
  const choices = useMemo(() => (geo ? siteChoices(geo, sessions) : []), [geo, sessions]);
  const site = filters.site === "" || (filters.site != null && choices.some((c) => c.id === filters.site)) ? filters.site : defaultSite(choices, sessions, session);
  const siteName = site ? (choices.find((c) => c.id === site)?.name ?? "") : "all sites";
  // A session of another site (an address that asks for both) counts as "all sessions".
  const sessionOn = session && (!site || bySession.get(session) === site) ? session : "";
  const siteSessions = useMemo(() => sessions.map((s, i) => ({ ...s, n: i + 1 })).filter((s) => !site || s.siteId === site), [sessions, site]);

  const shots = useMemo<FeatureCollection<Point, ShotProps>>(() => {
    const feats: Feature<Point, ShotProps>[] = [];
    for (const f of geo?.features ?? []) {
      if (!f.geometry || f.geometry.type !== "Point") continue;
      const p = (f.properties ?? {}) as Record<string, unknown>;
      const id = String(p.id ?? f.id ?? "");
      const errorMm = Number(p.errorMm);
      if (!Number.isFinite(errorMm)) continue;
      if (site && siteOfShot(f, bySession) !== site) continue;
      const sessionId = (p.sessionId as string | undefined) ?? null;
      const referenceM = typeof p.referenceM === "number" ? p.referenceM : null;
      if (sessionOn && sessionId !== sessionOn) continue;
      if (band && (referenceM == null || rangeBandOfLabel(referenceM, bandLabels) !== band)) continue;
      if (refl) {
        const pct = typeof p.reflectancePct === "number" ? p.reflectancePct : null;
        if (pct == null || reflectanceClass(pct, p.retro === true) !== refl) continue;
      }
      const within = p.within === true;
      feats.push({
        type: "Feature",
        geometry: f.geometry,
        properties: { id, errorMm, limitMm: Number(p.limitMm), within, outside: within ? 0 : 1, sessionId, referenceM, excluded: p.excluded === true },
      });
    }
    return { type: "FeatureCollection", features: feats };
  }, [geo, site, bySession, sessionOn, band, refl, bandLabels]);

  const maxMm = useMemo(() => scaleMaxMm(shots.features.map((f) => f.properties.limitMm)), [shots]);
  const hexes = useMemo(() => (hex ? hexBins(shots, autoCellSideM(shots)) : { type: "FeatureCollection" as const, features: [] }), [shots, hex]);
  const sources = useMemo(
    () => ({ outline: siteFc.outline as FeatureCollection, stations: siteFc.stations as FeatureCollection, targets: siteFc.targets as FeatureCollection, shots, hexes }),
    [siteFc, shots, hexes],
  );
  // The view frames the chosen site's located shots (all of them, whatever the other filters
  // say, so the view holds still while filtering), stations and targets.
  const frame = useMemo(
    () => ({
      key: geo ? `site:${site}` : "loading",
      bounds: siteBounds(geo ? site : "", { shots: geo ?? { type: "FeatureCollection", features: [] }, stations: siteFc.stations, targets: siteFc.targets }, sessions),
    }),
    [geo, site, siteFc, sessions],
  );

  function set(k: "session" | "band" | "refl" | "hex", v: string) {
    setFilters((f) => ({ ...f, [k]: k === "hex" ? v === "1" : v }));
  }
  function setSite(v: string) {
    // A session of another site would leave the map empty: drop it with the change of site.
    setFilters((f) => ({ ...f, site: v, session: v && f.session && bySession.get(f.session) !== v ? "" : f.session }));
  }

  const pick = selected ? (shots.features.find((f) => f.properties.id === selected)?.properties ?? null) : null;
  const pickRow = selected ? info.get(selected) : undefined;
  const pickDetail = pickRow;
  const total = geo?.features.length ?? 0;

  return (
    <div className="space-y-4">
      <nav aria-label="Breadcrumb">
        <Link to={`/review/sensors/${sensor.id}`} className="inline-flex min-h-11 items-center underline underline-offset-4">
          ← Report of {sensor.label}
        </Link>
      </nav>
      <h1 className="text-3xl font-bold">Range-error map — {sensor.label}</h1>
      <section aria-label="Map filters" className="card flex flex-wrap items-end gap-4">
        <div>
          <label htmlFor="m-site" className="field-label">
            Site
          </label>
          <select id="m-site" className="input" value={geo ? site : ""} disabled={!geo} onChange={(e) => setSite(e.target.value)}>
            {geo ? null : <option value="">Loading sites…</option>}
            {geo ? <option value="">All sites</option> : null}
            {choices.map((c) => (
              <option key={c.id} value={c.id}>
                {c.name} ({c.n} shots)
              </option>
            ))}
          </select>
        </div>
        <div>
          <label htmlFor="m-session" className="field-label">
            Session
          </label>
          <select id="m-session" className="input" value={sessionOn} onChange={(e) => set("session", e.target.value)}>
            <option value="">All sessions</option>
            {siteSessions.map((s) => (
              <option key={s.id} value={s.id}>
                #{s.n} {dateOnly(s.startedAt)} {s.siteName}
              </option>
            ))}
          </select>
        </div>
        <div>
          <label htmlFor="m-band" className="field-label">
            Range band
          </label>
          <select id="m-band" className="input" value={band} onChange={(e) => set("band", e.target.value)}>
            <option value="">All distances</option>
            {bandLabels.map((b) => (
              <option key={b} value={b}>
                {b} m
              </option>
            ))}
          </select>
        </div>
        <div>
          <label htmlFor="m-refl" className="field-label">
            Reflectance
          </label>
          <select id="m-refl" className="input" value={refl} onChange={(e) => set("refl", e.target.value)}>
            <option value="">All targets</option>
            {["dark", "mid", "bright", "retro"].map((b) => (
              <option key={b} value={b}>
                {bandWord(b)}
              </option>
            ))}
          </select>
        </div>
        <label className="flex min-h-11 cursor-pointer items-center gap-2 rounded-md border-2 border-line px-3">
          <input type="checkbox" className="h-5 w-5" checked={hex} onChange={(e) => set("hex", e.target.checked ? "1" : "")} />
          Hexagon bins (dense corridors)
        </label>
        {basemapUrl ? (
          <label className="flex min-h-11 cursor-pointer items-center gap-2 rounded-md border-2 border-line px-3">
            <input type="checkbox" className="h-5 w-5" checked={useBasemap} onChange={(e) => setUseBasemap(e.target.checked)} />
            Basemap (needs a network)
          </label>
        ) : null}
        <p className="pb-2 text-muted" aria-live="polite">
          {geo ? `${shots.features.length} of ${total} located shots shown (${siteName})` : "Loading shots…"}
        </p>
        {geo?.sampled ? (
          <p className="w-full font-bold" data-testid="map-sampled">
            {`This sensor has ${(geo.total ?? 0).toLocaleString("en-US")} located shots; the map draws ${total.toLocaleString("en-US")}: every excluded, outside-limit or flagged one (largest errors first) and a fixed sample of the others.`}
          </p>
        ) : null}
      </section>

      {error ? (
        <p role="alert" className="card font-bold text-fail">
          The shots could not be loaded: {error}
        </p>
      ) : null}

      <div className="grid gap-4 lg:grid-cols-[1fr_320px]">
        <div className="space-y-3">
          {mounted ? (
            <Suspense fallback={<div className="flex h-[62vh] min-h-[420px] items-center justify-center rounded-lg border-2 border-line">Loading the map…</div>}>
              <RangeMap sources={sources} maxMm={maxMm} showHex={hex} basemapUrl={useBasemap ? basemapUrl : null} onSelect={setSelected} frame={frame} />
            </Suspense>
          ) : (
            <div className="flex h-[62vh] min-h-[420px] items-center justify-center rounded-lg border-2 border-line">Loading the map…</div>
          )}
          {geo && total === 0 ? <p className="card">No shot of this sensor has a GPS position yet, so none can be placed on the map.</p> : null}
          <MapLegend maxMm={maxMm} hex={hex} />
        </div>
        <aside aria-label="Selected shot" className="card space-y-2" data-testid="shot-details">
          {pick ? (
            <>
              <h2 className="text-xl font-bold">
                Shot <LocalTime iso={pickRow?.takenAt ?? null} />
              </h2>
              <p>
                <WithinWord within={pick.within} /> its limit
              </p>
              <dl className="num grid grid-cols-2 gap-x-3 gap-y-1">
                <dt className="font-bold">Error</dt>
                <dd>{mmSigned(pick.errorMm, 2)}</dd>
                <dt className="font-bold">Limit</dt>
                <dd>± {mm(pick.limitMm, 2)}</dd>
                <dt className="font-bold">Reference</dt>
                <dd>{metres(pick.referenceM)}</dd>
                <dt className="font-bold">Range</dt>
                <dd>{metres(pickRow?.rangeM ?? null)}</dd>
                <dt className="font-bold">Target</dt>
                <dd>{pickDetail?.targetLabel ?? "—"}</dd>
                <dt className="font-bold">Reflectance</dt>
                <dd>{pickDetail?.reflectancePct == null ? "—" : `${pickDetail.reflectancePct} %`}</dd>
                <dt className="font-bold">Illuminance</dt>
                <dd>{pickDetail?.illuminanceKlux == null ? "—" : `${pickDetail.illuminanceKlux} klux`}</dd>
                <dt className="font-bold">Flags</dt>
                <dd>{pickRow?.flags.length ? pickRow.flags.join(", ") : "none"}</dd>
                <dt className="font-bold">State</dt>
                <dd>{pick.excluded ? "excluded" : "included"}</dd>
              </dl>
              {pickDetail?.photoIds.length ? (
                <img src={`/api/photos/${pickDetail.photoIds[0]}`} alt="Photo taken with this shot" className="w-full rounded border-2 border-line" />
              ) : (
                <p className="text-muted">No photo with this shot.</p>
              )}
              <button type="button" className="btn-secondary" onClick={() => setSelected(null)}>
                Close
              </button>
            </>
          ) : (
            <p>Tap a shot on the map to see its figures and photo.</p>
          )}
        </aside>
      </div>
    </div>
  );
}

export function MapLegend({ maxMm, hex }: { maxMm: number; hex: boolean }) {
  const gradient = `linear-gradient(to right, ${DIVERGING.join(", ")})`;
  return (
    <div className="card space-y-2" data-testid="map-legend" aria-label="Map legend">
      <p className="font-bold">{hex ? "Mean range error per hexagon (mm)" : "Signed range error (mm): red reads long, blue reads short"}</p>
      <div className="h-5 w-full max-w-md rounded border border-line" style={{ background: gradient }} aria-hidden="true" />
      <div className="num flex w-full max-w-md justify-between text-base">
        <span>−{maxMm} mm</span>
        <span>−{maxMm / 2}</span>
        <span>0</span>
        <span>+{maxMm / 2}</span>
        <span>+{maxMm} mm</span>
      </div>
      <div className="flex flex-wrap gap-x-5 gap-y-1 text-base">
        <span>
          <LegendSwatch shape="circle" color="var(--muted)" /> shot within its limit
        </span>
        <span>
          <LegendSwatch shape="triangle" color="var(--muted)" /> shot outside its limit
        </span>
        <span>
          <svg width="18" height="18" viewBox="0 0 18 18" aria-hidden="true" className="inline-block align-middle">
            <circle cx="9" cy="9" r="6.5" fill="var(--bg)" stroke="var(--fg)" strokeWidth="3.5" />
          </svg>{" "}
          station
        </span>
        <span>
          <svg width="16" height="16" viewBox="0 0 16 16" aria-hidden="true" className="inline-block align-middle">
            <circle cx="8" cy="8" r="5" fill="var(--accent)" />
          </svg>{" "}
          target
        </span>
        <span>
          <span className="inline-block h-3 w-6 border-2 border-dashed border-accent align-middle" /> site outline
        </span>
      </div>
    </div>
  );
}
