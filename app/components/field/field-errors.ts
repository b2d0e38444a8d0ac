// Where a message belongs on the log-shot form. The form names its fields by their record paths
// (api.md), so the tablet's own checks, the ranging core (through the contract's mapping) and the
// server's answers all name a field the same way. A message goes to the field its path names, or
// to the nearest field above it ("position.lat" → "position", "readings.phase.1.samples.3" →
// "readings.phase.1"); a list of readings without an index goes to its first box; anything else
// to the form as a whole ("form").
const SHOT_FIELDS: Record<string, string> = {
  targetId: "Target",
  "reference.distanceM": "Reference distance (m)",
  "reference.method": "How the distance was measured",
  "reference.tape.tapeId": "Tape",
  "reference.tape.tempC": "Tape temperature (°C)",
  "reference.tape.tensionN": "Pull (N)",
  "reference.tape.support": "Tape support",
  "reference.tape.spans": "Spans",
  "reference.stationId": "Station",
  "reference.edmId": "Reference EDM",
  "reference.uncertaintyMm": "Reference uncertainty (mm)",
  "reference.instrumentHeightM": "Instrument height (m)",
  "reference.targetHeightM": "Target height (m)",
  reflectancePct: "Reflectance (%)",
  illuminanceKlux: "Illuminance (klux)",
  incidenceDeg: "Incidence angle (°)",
  position: "GPS fix",
  note: "Note",
  // POST /api/photos names the upload "file" (api.md)
  file: "Photo",
};

/** The lists of readings: one box per reading, labelled with its number. */
const READING_LISTS: Record<string, (n: number) => string> = {
  "readings.rangesM": (n) => `Sensor range ${n} (m)`,
  "readings.roundTripNs": (n) => `Round-trip time ${n} (ns)`,
  "readings.phase": (n) => `Correlation samples ${n}`,
};

/** The form's field a record path belongs to: the path itself or the nearest one above it. */
export function fieldKeyOf(path: string): string {
  const parts = path.split(".");
  const list = parts.slice(0, 2).join(".");
  if (READING_LISTS[list]) return `${list}.${/^\d+$/.test(parts[2] ?? "") ? parts[2] : 0}`;
  for (let n = parts.length; n > 0; n--) {
    const head = parts.slice(0, n).join(".");
    if (SHOT_FIELDS[head]) return head;
  }
  return "form";
}

export function fieldLabelOf(path: string): string {
  const key = fieldKeyOf(path);
  const list = READING_LISTS[key.split(".").slice(0, 2).join(".")];
  if (list) return list(Number(key.split(".")[2]) + 1);
  return key === "form" ? "Shot" : SHOT_FIELDS[key]!;
}

/** Messages keyed by the form's field (a record path, or "form"); two on one field are joined. */
export function errorsByField(errors: { path: string; message: string }[]): Record<string, string> {
  const out: Record<string, string> = {};
  for (const e of errors) {
    const k = fieldKeyOf(e.path);
    out[k] = out[k] ? `${out[k]} ${e.message}` : e.message;
  }
  return out;
}

// A session's fields: the server's paths are the form's own ids.
export const SESSION_FIELDS = ["sensorId", "siteId", "projectId", "startedAt", "airTempC", "pressureHpa", "humidityPct", "note"] as const;

const SESSION_LABELS: Record<string, string> = {
  sensorId: "Sensor",
  siteId: "Site",
  projectId: "Project",
  startedAt: "Start time",
  airTempC: "Air temperature (°C)",
  pressureHpa: "Pressure (hPa)",
  humidityPct: "Humidity (%)",
  note: "Note",
};

export function sessionFieldLabelOf(path: string): string {
  return SESSION_LABELS[path.split(".")[0]!] ?? (path || "Session");
}

/** Messages keyed by the session form's field ids; a path the form has no field for goes to "form". */
export function sessionErrorsByField(errors: { path: string; message: string }[]): Record<string, string> {
  const out: Record<string, string> = {};
  for (const e of errors) {
    const head = e.path.split(".")[0]!;
    const k = (SESSION_FIELDS as readonly string[]).includes(head) ? head : "form";
    out[k] = out[k] ? `${out[k]} ${e.message}` : e.message;
  }
  return out;
}
