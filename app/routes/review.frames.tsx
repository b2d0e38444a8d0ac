// Check-shots from time-of-flight depth frames (issue 18, ranging.md §8): choose the session and
// the target, load one or more 16-bit depth PNGs (or N correlation frames), see the frame in
// false colour with a depth legend, drag a box on the target, see the figures, accept. The
// measurement itself is the server's (POST /api/frames); the browser only draws the frame.
import { useEffect, useMemo, useRef, useState } from "react";
import { Link } from "react-router";
import { decode } from "fast-png";
import type { Route } from "./+types/review.frames";
import { FIELD } from "~/auth/access";
import { requireRole } from "~/auth/guards.server";
import { scanImportContext } from "~/models/scans.server";
import type { ScanAnswer } from "~/models/scan-schemas";
import { ScanRowsTable, uploadWithProgress } from "~/components/review/scan-rows";
import { dateTime } from "~/components/review/format";
import { depthFromCorrelation, type Intrinsics } from "~/domain";
import { boxText, depthRange, parseBox, ramp, RAMP, type Frame } from "~/components/review/depth-frame";

export const meta: Route.MetaFunction = () => [{ title: "Check-shots from depth frames · Shotbook" }];

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireRole(request, FIELD);
  return scanImportContext(user);
}

export default function FramesPage({ loaderData }: Route.ComponentProps) {
  const { sessions, targets } = loaderData;
  const [sessionId, setSessionId] = useState("");
  const [targetId, setTargetId] = useState("");
  const [referenceM, setReferenceM] = useState("");
  const [mode, setMode] = useState<"depth" | "correlation">("depth");
  const [frequencyHz, setFrequencyHz] = useState("");
  const [files, setFiles] = useState<File[]>([]);
  const [frame, setFrame] = useState<Frame | null>(null);
  const [frameError, setFrameError] = useState<string | null>(null);
  const [box, setBox] = useState("");
  const [phase, setPhase] = useState<"idle" | "uploading" | "working">("idle");
  const [progress, setProgress] = useState(0);
  const [answer, setAnswer] = useState<ScanAnswer | null>(null);
  const [committed, setCommitted] = useState(false);
  const [errors, setErrors] = useState<{ path: string; message: string }[]>([]);
  const [error, setError] = useState<string | null>(null);
  const canvas = useRef<HTMLCanvasElement>(null);
  const drag = useRef<{ u: number; v: number } | null>(null);

  const session = sessions.find((s) => s.id === sessionId);
  const intrinsics = (session?.intrinsics ?? null) as Intrinsics | null;
  const siteTargets = targets.filter((t) => t.siteId === session?.siteId);
  const [zLo, zHi] = useMemo(() => (frame ? depthRange(frame.zM) : [0, 1]), [frame]);
  const scale = frame ? Math.max(1, Math.floor(640 / frame.width)) : 1;
  const b = parseBox(box);

  // decode the chosen PNGs in the browser, only to draw the frame (the server measures)
  useEffect(() => {
    setFrame(null);
    setFrameError(null);
    if (!files.length || !session) return;
    let stop = false;
    (async () => {
      try {
        const imgs = await Promise.all(files.map(async (f) => ({ name: f.name, img: decode(new Uint8Array(await f.arrayBuffer())) })));
        for (const { name, img } of imgs) {
          if (img.depth !== 16 || img.channels !== 1) throw new Error(`${name} is a ${img.depth}-bit PNG with ${img.channels} channels; frames are 16-bit greyscale.`);
        }
        const { width, height } = imgs[0].img;
        let zM: Float64Array;
        if (mode === "depth") {
          if (!session.depthScaleMm) throw new Error("The session's sensor has no depth scale on its registry page; an admin adds it first.");
          const s = session.depthScaleMm / 1000;
          zM = Float64Array.from(imgs[0].img.data as Uint16Array, (v) => (v === 0 ? NaN : v * s));
        } else {
          const f = Number(frequencyHz);
          if (!intrinsics || !(f > 0) || imgs.length < 3) throw new Error("Correlation frames need at least 3 PNGs, the modulation frequency and the sensor's intrinsics.");
          zM = depthFromCorrelation(
            imgs.map((i) => i.img.data as Uint16Array),
            width,
            height,
            f,
            intrinsics,
            { n: 1 + (session.assumedRefractivity ?? 0) * 1e-6 },
          ).zM;
        }
        if (!stop) setFrame({ width, height, zM });
      } catch (e) {
        if (!stop) setFrameError(e instanceof Error ? e.message : String(e));
      }
    })();
    return () => {
      stop = true;
    };
  }, [files, mode, frequencyHz, session, intrinsics]);

  useEffect(() => {
    const c = canvas.current;
    if (!c || !frame) return;
    c.width = frame.width;
    c.height = frame.height;
    const ctx = c.getContext("2d")!;
    const img = ctx.createImageData(frame.width, frame.height);
    for (let i = 0; i < frame.zM.length; i++) {
      const z = frame.zM[i];
      const [r, g, bl] = z > 0 ? ramp((z - zLo) / (zHi - zLo)) : [0, 0, 0];
      img.data.set([r, g, bl, 255], 4 * i);
    }
    ctx.putImageData(img, 0, 0);
  }, [frame, zLo, zHi]);

  function pixelOf(e: React.PointerEvent) {
    const r = (e.currentTarget as HTMLElement).getBoundingClientRect();
    const u = Math.floor(((e.clientX - r.left) / r.width) * frame!.width);
    const v = Math.floor(((e.clientY - r.top) / r.height) * frame!.height);
    return { u: Math.max(0, Math.min(frame!.width - 1, u)), v: Math.max(0, Math.min(frame!.height - 1, v)) };
  }
  function onDown(e: React.PointerEvent) {
    if (!frame) return;
    (e.currentTarget as HTMLElement).setPointerCapture(e.pointerId);
    drag.current = pixelOf(e);
    setBox(boxText({ u0: drag.current.u, v0: drag.current.v, u1: drag.current.u, v1: drag.current.v }));
    setAnswer(null);
  }
  function onMove(e: React.PointerEvent) {
    if (!drag.current) return;
    const p = pixelOf(e);
    const a = drag.current;
    setBox(boxText({ u0: Math.min(a.u, p.u), v0: Math.min(a.v, p.v), u1: Math.max(a.u, p.u), v1: Math.max(a.v, p.v) }));
  }
  const onUp = () => (drag.current = null);

  async function send(commit: boolean) {
    const problems: { path: string; message: string }[] = [];
    if (!sessionId) problems.push({ path: "sessionId", message: "Choose the session the frames belong to." });
    if (!targetId) problems.push({ path: "targetId", message: "Choose the target in the frames." });
    if (!(Number(referenceM) > 0)) problems.push({ path: "referenceM", message: "Give the reference distance from the camera to the board (m), e.g. 3.000." });
    if (!files.length) problems.push({ path: "depth", message: "Choose the frame files (16-bit PNG)." });
    if (!b) problems.push({ path: "box", message: "Drag a box on the target in the frame (or type u0,v0,u1,v1)." });
    if (mode === "correlation" && !(Number(frequencyHz) > 0)) problems.push({ path: "frequencyHz", message: "Give the modulation frequency (Hz) of the correlation frames." });
    setErrors(problems);
    setError(null);
    if (problems.length) return;
    const form = new FormData();
    form.set("sessionId", sessionId);
    form.set("targetId", targetId);
    form.set("box", box);
    form.set("referenceM", referenceM);
    form.set("plot", "true");
    if (mode === "correlation") form.set("frequencyHz", frequencyHz);
    if (commit) form.set("commit", "true");
    for (const f of files) form.append(mode, f);
    setPhase("uploading");
    try {
      const res = await uploadWithProgress("/api/frames", form, (f) => {
        setProgress(Math.round(f * 100));
        if (f >= 1) setPhase("working");
      });
      setPhase("idle");
      if (res.status !== 200) {
        setErrors(res.body.errors ?? []);
        setError(res.body.error ?? `The server answered ${res.status}.`);
        return;
      }
      setAnswer(res.body);
      setCommitted(commit);
    } catch (e) {
      setPhase("idle");
      setError(e instanceof Error ? e.message : String(e));
    }
  }

  const errorOf = (path: string) => errors.find((e) => e.path === path || e.path.startsWith(`${path}.`))?.message;
  const fieldError = (path: string) => {
    const m = errorOf(path);
    return m ? (
      <p id={`e-${path}`} className="field-error" role="alert">
        ⚠ {m}
      </p>
    ) : null;
  };
  const inv = (path: string) => (errorOf(path) ? true : undefined);
  const row = answer?.targets[0];

  return (
    <div className="space-y-6">
      <nav aria-label="Breadcrumb">
        <Link to="/review" className="inline-flex min-h-11 items-center underline underline-offset-4">
          ← Sensor verdicts
        </Link>
      </nav>
      <h1 className="text-3xl font-bold">Check-shots from depth frames</h1>
      <p className="max-w-3xl">
        Load the frames a time-of-flight camera took of one target board — one or more depth frames, or the raw correlation frames of one modulation frequency — drag a box on the board, and Shotbook
        fits a plane to its pixels and measures the range along the ray through the box centre. Several frames of the same view also give the temporal noise. Nothing is stored until you accept.
      </p>

      <section className="card grid gap-4 sm:grid-cols-2 lg:grid-cols-3" aria-label="The frames">
        <div className="sm:col-span-2">
          <label htmlFor="f-session" className="field-label">
            Session
          </label>
          <select
            id="f-session"
            className="input"
            value={sessionId}
            aria-invalid={inv("sessionId")}
            onChange={(e) => {
              setSessionId(e.target.value);
              setTargetId("");
              setAnswer(null);
            }}
          >
            <option value="">Choose a synced session…</option>
            {sessions.map((s) => (
              <option key={s.id} value={s.id}>
                {dateTime(s.startedAt)} · {s.sensorLabel} · {s.siteName}
                {s.intrinsics ? "" : " (no intrinsics)"}
              </option>
            ))}
          </select>
          {fieldError("sessionId")}
          {session && !intrinsics ? <p className="text-warn">⚠ {session.sensorLabel} has no intrinsics on its registry page: an admin adds fx, fy, cx, cy and the depth scale first.</p> : null}
        </div>
        <div>
          <label htmlFor="f-target" className="field-label">
            Target
          </label>
          <select
            id="f-target"
            className="input"
            value={targetId}
            disabled={!session}
            aria-invalid={inv("targetId")}
            onChange={(e) => {
              setTargetId(e.target.value);
              const t = siteTargets.find((x) => x.id === e.target.value);
              if (t?.referenceM && !referenceM) setReferenceM(String(t.referenceM));
              setAnswer(null);
            }}
          >
            <option value="">{session ? "Choose the target…" : "Choose a session first"}</option>
            {siteTargets.map((t) => (
              <option key={t.id} value={t.id}>
                {t.label} ({t.reflectancePct} %)
              </option>
            ))}
          </select>
          {fieldError("targetId")}
        </div>
        <div>
          <label htmlFor="f-ref" className="field-label">
            Reference distance, camera to board (m)
          </label>
          <input
            id="f-ref"
            className="input"
            inputMode="decimal"
            value={referenceM}
            aria-invalid={inv("referenceM")}
            onChange={(e) => {
              setReferenceM(e.target.value);
              setAnswer(null);
            }}
          />
          {fieldError("referenceM")}
        </div>
        <fieldset className="sm:col-span-2">
          <legend className="field-label">The files hold</legend>
          <label className="mr-6 inline-flex min-h-11 items-center gap-2">
            <input type="radio" name="mode" checked={mode === "depth"} onChange={() => setMode("depth")} /> depth frames (one or more)
          </label>
          <label className="inline-flex min-h-11 items-center gap-2">
            <input type="radio" name="mode" checked={mode === "correlation"} onChange={() => setMode("correlation")} /> correlation frames (N ≥ 3, in phase order)
          </label>
        </fieldset>
        {mode === "correlation" ? (
          <div>
            <label htmlFor="f-freq" className="field-label">
              Modulation frequency (Hz)
            </label>
            <input id="f-freq" className="input" inputMode="decimal" value={frequencyHz} aria-invalid={inv("frequencyHz")} onChange={(e) => setFrequencyHz(e.target.value)} />
            {fieldError("frequencyHz")}
          </div>
        ) : null}
        <div className="sm:col-span-2 lg:col-span-3">
          <label htmlFor="f-files" className="field-label">
            Frames (16-bit greyscale PNG)
          </label>
          <input
            id="f-files"
            type="file"
            multiple
            accept=".png,image/png"
            className="input"
            aria-invalid={inv(mode)}
            onChange={(e) => {
              setFiles(Array.from(e.target.files ?? []));
              setAnswer(null);
            }}
          />
          {fieldError(mode)}
          {fieldError("depth")}
          {frameError ? (
            <p className="field-error" role="alert">
              ⚠ {frameError}
            </p>
          ) : null}
        </div>
      </section>

      {frame ? (
        <section className="card space-y-3" aria-labelledby="h-frame">
          <h2 id="h-frame" className="text-2xl font-bold">
            The frame{files.length > 1 && mode === "depth" ? ` (first of ${files.length})` : ""}: drag a box on the board
          </h2>
          <div
            className="relative inline-block touch-none select-none"
            style={{ width: frame.width * scale, height: frame.height * scale }}
            onPointerDown={onDown}
            onPointerMove={onMove}
            onPointerUp={onUp}
            data-testid="frame"
          >
            <canvas
              ref={canvas}
              aria-label={`Depth frame ${frame.width}×${frame.height} pixels in false colour`}
              style={{ width: frame.width * scale, height: frame.height * scale, imageRendering: "pixelated" }}
            />
            {b ? (
              <div
                className="pointer-events-none absolute border-2 border-white outline outline-2 outline-black"
                style={{ left: b.u0 * scale, top: b.v0 * scale, width: (b.u1 - b.u0 + 1) * scale, height: (b.v1 - b.v0 + 1) * scale }}
              />
            ) : null}
          </div>
          <div className="max-w-md" aria-label="Depth legend">
            <div className="h-4 rounded" style={{ background: `linear-gradient(to right, ${RAMP.map((c) => `rgb(${c.join(",")})`).join(", ")})` }} />
            <div className="flex justify-between text-sm num">
              <span>{zLo.toFixed(3)} m</span>
              <span>depth (Z)</span>
              <span>{zHi.toFixed(3)} m</span>
            </div>
            <p className="text-sm text-muted">Black: no depth (missing pixels).</p>
          </div>
          <div className="flex flex-wrap items-end gap-3">
            <div>
              <label htmlFor="f-box" className="field-label">
                Box u0,v0,u1,v1 (pixels, inclusive)
              </label>
              <input
                id="f-box"
                className="input num"
                value={box}
                aria-invalid={inv("box")}
                onChange={(e) => {
                  setBox(e.target.value);
                  setAnswer(null);
                }}
              />
              {fieldError("box")}
            </div>
            <button type="button" className="btn" disabled={phase !== "idle"} onClick={() => void send(false)}>
              Measure the box
            </button>
            {phase !== "idle" ? <span role="status">{phase === "uploading" ? `Uploading — ${progress} %` : "Fitting the board…"}</span> : null}
          </div>
        </section>
      ) : null}
      {error ? (
        <p className="field-error" role="alert">
          ⚠ {error}
        </p>
      ) : null}

      {answer && row ? (
        <section className="space-y-3" aria-labelledby="h-fig">
          <h2 id="h-fig" className="text-2xl font-bold">
            Figures
          </h2>
          <p className="text-sm text-muted">
            Frames SHA-256{" "}
            <code className="break-all" data-testid="file-sha">
              {answer.fileSha256}
            </code>
          </p>
          <ScanRowsTable rows={answer.targets} frames />
          {committed ? (
            <p className="text-lg font-bold" role="status" data-testid="commit-summary">
              {row.sync?.status === "accepted" ? "The check-shot is stored." : row.sync?.status === "duplicate" ? "These frames were already stored for this target." : "The shot was refused."}
            </p>
          ) : row.status === "found" && !row.errors?.length ? (
            <button type="button" className="btn" disabled={phase !== "idle"} onClick={() => void send(true)}>
              Accept the check-shot
            </button>
          ) : null}
        </section>
      ) : null}
    </div>
  );
}
