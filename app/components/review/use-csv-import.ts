// The CSV import screen's state (issue 13): the file read in chunks, the column mapping, each
// row mapped and judged as the server will judge it, the confirmations of implausible rows, and
// the chunked send. The screen (app/routes/review.import.tsx) only lays it out.
import { useMemo, useRef, useState } from "react";
import Papa from "papaparse";
import { classifyRow, guessMapping, mapRow, type ImportMapping, type ImportTarget } from "~/contract/import-rows";
import type { SensorSpec } from "~/domain";

export type ImportSensor = { id: string; spec: SensorSpec };
export type ImportSite = { id: string; targets: ImportTarget[] };

type Row = { row: number; values: Record<string, string> };
export type Result = { row: number; id: string; status: "accepted" | "duplicate" | "rejected"; errors: { field: string; message: string }[] };
const CHUNK = 250;

/** A UUID (version 8, RFC 9562 variant) from SHA-256 of a name: the same file row gives the same id, so a re-import is a duplicate. */
async function nameUuid(name: string) {
  const h = new Uint8Array(await crypto.subtle.digest("SHA-256", new TextEncoder().encode(name)));
  h[6] = (h[6]! & 0x0f) | 0x80;
  h[8] = (h[8]! & 0x3f) | 0x80;
  const x = Array.from(h.slice(0, 16), (b) => b.toString(16).padStart(2, "0")).join("");
  return `${x.slice(0, 8)}-${x.slice(8, 12)}-${x.slice(12, 16)}-${x.slice(16, 20)}-${x.slice(20, 32)}`;
}

function optionalNumber(v: string) {
  const t = v.trim();
  if (!t) return null;
  const n = Number(t.replace(",", "."));
  return Number.isFinite(n) ? n : Number.NaN;
}

export function useCsvImport({ sensors, sites, mappings }: { sensors: ImportSensor[]; sites: ImportSite[]; mappings: Record<string, ImportMapping> }) {
  const [sensorId, setSensorId] = useState("");
  const [siteId, setSiteId] = useState("");
  const [projectId, setProjectId] = useState("");
  const [fileName, setFileName] = useState("");
  const [fileHash, setFileHash] = useState("");
  const [headers, setHeaders] = useState<string[]>([]);
  const [rows, setRows] = useState<Row[]>([]);
  const [parseErrors, setParseErrors] = useState<string[]>([]);
  const [mapping, setMapping] = useState<ImportMapping>({});
  const [air, setAir] = useState({ airTempC: "", pressureHpa: "", humidityPct: "", note: "" });
  const [phase, setPhase] = useState<"idle" | "parsing" | "ready" | "sending" | "done">("idle");
  const [progress, setProgress] = useState(0);
  const [results, setResults] = useState<Result[]>([]);
  const [sendError, setSendError] = useState<string | null>(null);
  const [formError, setFormError] = useState<string | null>(null);
  const cancel = useRef(false);

  const sensor = sensors.find((s) => s.id === sensorId);
  const site = sites.find((s) => s.id === siteId);
  const airNums = useMemo(
    () => ({ airTempC: optionalNumber(air.airTempC), pressureHpa: optionalNumber(air.pressureHpa), humidityPct: optionalNumber(air.humidityPct) }),
    [air.airTempC, air.pressureHpa, air.humidityPct],
  );
  const airOk = Object.values(airNums).every((v) => v == null || Number.isFinite(v));

  const [confirmed, setConfirmed] = useState<ReadonlySet<number>>(new Set());
  // each row judged as the server will (ranging.md §9 bounds), plus the "mm typed as m?" flag
  const mapped = useMemo(() => {
    const airIn = airOk ? airNums : {};
    return rows.map((r) => {
      const m = mapRow(r.values, mapping, site?.targets ?? []);
      return { ...r, m, c: classifyRow(m, sensor?.spec, airIn) };
    });
  }, [rows, mapping, site, sensor, airNums, airOk]);
  const implausible = mapped.filter((r) => r.c.kind === "implausible");
  const valid = mapped.filter((r) => r.m.ok && (r.c.kind === "ready" || (r.c.kind === "implausible" && confirmed.has(r.row))));
  const invalid = mapped.filter((r) => r.c.kind === "error");
  const unconfirmed = implausible.filter((r) => !confirmed.has(r.row));
  const toggleConfirm = (row: number, on: boolean) => {
    const next = new Set(confirmed);
    if (on) next.add(row);
    else next.delete(row);
    setConfirmed(next);
  };

  function chooseSensor(id: string) {
    setSensorId(id);
    if (headers.length) setMapping(mappings[id] ?? guessMapping(headers));
  }

  async function readFile(file: File) {
    setPhase("parsing");
    setProgress(0);
    setResults([]);
    setParseErrors([]);
    setFileName(file.name);
    const text = await file.text();
    setFileHash(Array.from(new Uint8Array(await crypto.subtle.digest("SHA-256", new TextEncoder().encode(text))), (b) => b.toString(16).padStart(2, "0")).join(""));
    const out: Row[] = [];
    const errs: string[] = [];
    let fields: string[] = [];
    Papa.parse<Record<string, string>>(text, {
      header: true,
      skipEmptyLines: "greedy",
      chunkSize: 256 * 1024,
      chunk(res: Papa.ParseResult<Record<string, string>>, parser: Papa.Parser) {
        if (!fields.length && res.meta.fields) fields = res.meta.fields;
        for (const d of res.data) out.push({ row: out.length + 2, values: d });
        for (const e of res.errors.slice(0, 20)) errs.push(`Line ${(e.row ?? 0) + 2}: ${e.message}`);
        setProgress(Math.min(100, Math.round((100 * res.meta.cursor) / Math.max(1, text.length))));
        // Yield so the progress bar paints between chunks of a large file.
        parser.pause();
        setTimeout(() => parser.resume(), 0);
      },
      complete() {
        setHeaders(fields);
        setRows(out);
        setParseErrors(errs);
        setMapping(sensorId && mappings[sensorId] ? mappings[sensorId]! : guessMapping(fields));
        setProgress(100);
        setPhase("ready");
      },
    });
  }

  async function send() {
    setFormError(null);
    setSendError(null);
    if (!sensorId || !siteId) return setFormError("Choose the sensor and the site first.");
    if (!mapping.takenAt || !mapping.rangeM || (!mapping.distanceM && !mapping.target)) return setFormError("Map the time, the sensor range and the reference distance (or a target column).");
    if (!airOk) return setFormError("Air values must be numbers (or left empty).");
    if (valid.length === 0) return setFormError("No row is valid with this mapping.");
    setPhase("sending");
    setProgress(0);
    cancel.current = false;
    const times = valid.map((r) => (r.m.ok ? r.m.shot.takenAt : "")).sort();
    const sessionId = await nameUuid(`${sensorId}|${fileHash}|session`);
    const all: Result[] = [];
    const list = valid;
    for (let i = 0; i < list.length; i += CHUNK) {
      if (cancel.current) break;
      const part = await Promise.all(list.slice(i, i + CHUNK).map(async (r) => ({ row: r.row, id: await nameUuid(`${sensorId}|${fileHash}|${r.row}`), values: r.values })));
      try {
        const res = await fetch("/review/import/chunk", {
          method: "POST",
          headers: { "Content-Type": "application/json", Accept: "application/json" },
          body: JSON.stringify({
            sensorId,
            siteId,
            projectId: projectId || undefined,
            deviceId: `csv-import:${fileName}`.slice(0, 200),
            session: { id: sessionId, startedAt: times[0], ...airNums, note: air.note || `Imported from ${fileName}` },
            mapping,
            rows: part,
          }),
        });
        const body = (await res.json()) as { rows?: Result[]; error?: string; errors?: { field: string; message: string }[] };
        if (!res.ok) {
          setSendError(`${body.error ?? `The server answered ${res.status}`}${body.errors?.length ? `: ${body.errors.map((e) => `${e.field} ${e.message}`).join("; ")}` : ""}`);
          break;
        }
        all.push(...(body.rows ?? []));
        setResults([...all]);
      } catch {
        setSendError("The server could not be reached. What was sent so far is kept; import the same file again to send the rest (rows already in are recognised).");
        break;
      }
      setProgress(Math.round((100 * Math.min(list.length, i + CHUNK)) / list.length));
    }
    setPhase("done");
  }

  const counts = {
    accepted: results.filter((r) => r.status === "accepted").length,
    duplicate: results.filter((r) => r.status === "duplicate").length,
    rejected: results.filter((r) => r.status === "rejected").length,
  };

  return {
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
  };
}
