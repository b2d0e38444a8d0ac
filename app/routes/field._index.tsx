// Start a session (sensor, site, air, sky) and see this tablet's sessions. Client-rendered
// from IndexedDB, so it opens with no signal.
import { useState } from "react";
import { Link, useNavigate } from "react-router";
import type { Route } from "./+types/field._index";
import { formatWhen, FieldLoading } from "~/components/field/chrome";
import { Choice, NumberField, parseNum } from "~/components/field/inputs";
import { EMPTY_SESSION, projectProblem, SessionFields, sessionRecordOf, sharedProjects, type SessionValues } from "~/components/field/session-fields";
import { syncSoon } from "~/offline/autosync";
import { fieldDb } from "~/offline/db";
import { useLiveQuery } from "~/offline/live";
import { OutboxError, startSession } from "~/offline/outbox";
import { readReference, type ReferenceCopy } from "~/offline/reference";
import type { LocalSession } from "~/offline/types";

export const meta: Route.MetaFunction = () => [{ title: "Start a session — Shotbook field" }];

type SessionRow = LocalSession & { shots: number; queued: number };

async function sessionRows(): Promise<SessionRow[]> {
  const db = fieldDb();
  return db.transaction("r", db.sessions, db.shots, async () => {
    const sessions = await db.sessions.orderBy("queuedAt").reverse().limit(30).toArray();
    return Promise.all(
      sessions.map(async (s) => {
        const [shots, synced] = await Promise.all([db.shots.where("sessionId").equals(s.id).count(), db.shots.where("[sessionId+state]").equals([s.id, "synced"]).count()]);
        return { ...s, shots, queued: shots - synced };
      }),
    );
  });
}

export async function clientLoader() {
  const [reference, sessions] = await Promise.all([readReference(), sessionRows()]);
  return { reference, sessions };
}
clientLoader.hydrate = true as const;

export function HydrateFallback() {
  return <FieldLoading />;
}

const SKY = [
  { value: "dark", label: "Dusk or indoors (≈ 0.5 klux)", klux: 0.5 },
  { value: "overcast", label: "Overcast (≈ 5 klux)", klux: 5 },
  { value: "shade", label: "Shade on a sunny day (≈ 10 klux)", klux: 10 },
  { value: "hazy", label: "Hazy sun (≈ 40 klux)", klux: 40 },
  { value: "sun", label: "Bright sun (≈ 90 klux)", klux: 90 },
  { value: "measured", label: "Measured with a lux meter", klux: NaN },
] as const;
type Sky = (typeof SKY)[number]["value"];

export default function FieldStart({ loaderData }: Route.ComponentProps) {
  const reference = useLiveQuery<ReferenceCopy>(() => readReference(), [], loaderData.reference);
  const sessions = useLiveQuery(() => sessionRows(), [], loaderData.sessions);
  const navigate = useNavigate();
  const [values, setValues] = useState<SessionValues>(EMPTY_SESSION);
  const [sky, setSky] = useState<Sky>("overcast");
  const [measuredKlux, setMeasuredKlux] = useState("");
  const [errors, setErrors] = useState<Record<string, string>>({});
  const [busy, setBusy] = useState(false);
  const { sensorId, siteId } = values;
  const dirty = Boolean(sensorId || siteId || values.airTempC || values.pressureHpa || values.humidityPct || values.note || measuredKlux);

  const implied = (v: SessionValues) => {
    const shared = sharedProjects(reference.projects, v.sensorId, v.siteId);
    return shared.length === 1 ? shared[0]!.id : v.projectId;
  };

  async function onSubmit(e: React.FormEvent) {
    e.preventDefault();
    const errs: Record<string, string> = {};
    if (!sensorId) errs.sensorId = "Choose the sensor";
    if (!siteId) errs.siteId = "Choose the site";
    const projectError = projectProblem(reference.projects, values);
    if (projectError) errs.projectId = projectError;
    const preset = SKY.find((x) => x.value === sky)!;
    const klux = sky === "measured" ? parseNum(measuredKlux) : preset.klux;
    if (sky === "measured" && (klux === undefined || Number.isNaN(klux) || klux < 0)) errs.illuminance = "Enter the measured illuminance (klux), 0 or more";
    if (Object.keys(errs).length) {
      setErrors(errs);
      return;
    }
    setBusy(true);
    try {
      const s = await startSession(
        // The implied project goes with the record even if the screen has not caught up yet.
        sessionRecordOf({ ...values, projectId: implied(values) }),
        { sky: sky === "measured" ? `measured ${klux} klux` : preset.label, illuminanceKlux: klux },
      );
      syncSoon();
      navigate(`/field/session/${s.id}`);
    } catch (err) {
      if (err instanceof OutboxError) setErrors(Object.fromEntries(err.errors.map((x) => [x.path || "form", x.message])));
      else setErrors({ form: String(err) });
    } finally {
      setBusy(false);
    }
  }

  const noReference = reference.sensors.length === 0 || reference.sites.length === 0;
  // Sensor and site chosen but in no project of this crew: the server would refuse the session (api.md v1.1).
  const noProject = Boolean(sensorId && siteId) && sharedProjects(reference.projects, sensorId, siteId).length === 0;

  return (
    <div className="grid gap-6 lg:grid-cols-[3fr_2fr]">
      <form onSubmit={onSubmit} noValidate className="card space-y-5" aria-labelledby="start-title" data-dirty={dirty ? "true" : "false"}>
        <h1 id="start-title" className="text-3xl font-bold">
          Start session
        </h1>
        {noReference ? (
          <p className="rounded-md border-2 border-warn p-3 font-bold" role="status">
            {reference.copiedAt
              ? "The reference data on this tablet has no sensor or no site yet. Ask an admin to add them, then open this page online."
              : "No reference data on this tablet yet. Open this page once with a connection: sensors, sites and tapes are copied automatically."}
          </p>
        ) : null}
        {errors.form ? (
          <p className="field-error" role="alert">
            {errors.form}
          </p>
        ) : null}
        <SessionFields
          reference={reference}
          values={values}
          errors={errors}
          onChange={(key, v) => {
            setValues((cur) => ({ ...cur, [key]: v }));
            if (key === "sensorId" || key === "siteId") setErrors((e) => ({ ...e, [key]: "", projectId: "" }));
            if (key === "projectId") setErrors((e) => ({ ...e, projectId: "" }));
          }}
        >
          <fieldset className="space-y-3">
            <legend className="text-xl font-bold">Sky</legend>
            <Choice name="sky" legend="Light at the targets" value={sky} onChange={setSky} options={SKY.map((x) => ({ value: x.value, label: x.label }))} />
            {sky === "measured" ? <NumberField id="illuminance" label="Illuminance (klux)" unit="klux" value={measuredKlux} onChange={setMeasuredKlux} required error={errors.illuminance} /> : null}
            <p className="text-sm text-muted">Each shot starts with this illuminance; change it on the shot when the light changes.</p>
          </fieldset>
        </SessionFields>

        <button type="submit" className="btn min-h-14 px-8 text-xl" disabled={busy || noReference || noProject}>
          Start session
        </button>
      </form>

      <div className="space-y-6">
        <section className="card space-y-2 border-warn" aria-labelledby="cautions">
          <h2 id="cautions" className="text-xl font-bold">
            Before the first shot
          </h2>
          <ul className="list-disc space-y-1 pl-6">
            <li>Follow the laser safety class of the sensor (IEC 60825-1) and the maker's manual.</li>
            <li>Never aim the sensor at people, vehicles or aircraft.</li>
            <li>Set out traffic control when targets stand by a road.</li>
            <li>Shotbook checks range performance; it is no calibration certificate.</li>
          </ul>
        </section>
        <section className="space-y-3" aria-labelledby="sessions-title">
          <h2 id="sessions-title" className="text-2xl font-bold">
            Sessions on this tablet
          </h2>
          {sessions.length === 0 ? <p className="text-muted">None yet: start one on the left.</p> : null}
          <ul className="space-y-2">
            {sessions.map((s) => {
              const sn = reference.sensors.find((x) => x.id === s.record.sensorId);
              const st = reference.sites.find((x) => x.id === s.record.siteId);
              return (
                <li key={s.id}>
                  <Link to={`/field/session/${s.id}`} className="card block min-h-11 hover:border-accent" data-testid="session-link">
                    <span className="block text-lg font-bold">
                      {sn?.label ?? s.record.sensorId} at {st?.name ?? s.record.siteId}
                    </span>
                    <span className="num block">
                      {formatWhen(s.record.startedAt)} · {s.shots} {s.shots === 1 ? "shot" : "shots"}
                      {s.queued ? ` · ${s.queued} not yet synced` : s.shots ? " · all synced" : ""}
                      {s.state === "rejected" ? " · session refused by the server" : ""}
                    </span>
                  </Link>
                </li>
              );
            })}
          </ul>
        </section>
      </div>
    </div>
  );
}
