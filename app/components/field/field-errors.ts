// Where a message belongs on the log-shot form: the paths of the tablet's own checks, of the
// ranging core and of the server's answers ("readings.rangesM.0") all map to one field.
const RULES: [RegExp, (m: RegExpMatchArray) => string][] = [
  [/^targetId$/, () => "target"],
  [/^reference\.distanceM/, () => "distance"],
  [/^reference\.method/, () => "method"],
  [/^reference\.tape\.tapeId/, () => "tape"],
  [/^reference\.tape\.tempC/, () => "tapeTemp"],
  [/^reference\.tape\.tensionN/, () => "tension"],
  [/^reference\.tape\.support/, () => "support"],
  [/^reference\.tape\.spans/, () => "spans"],
  [/^reference\.tape/, () => "tape"],
  [/^reference\.stationId/, () => "station"],
  [/^reference\.edmId/, () => "edm"],
  [/^reference\.uncertaintyMm/, () => "refUncertainty"],
  [/^reference\.instrumentHeightM/, () => "ih"],
  [/^reference\.targetHeightM/, () => "th"],
  [/^reference\.(station|target)/, () => "station"],
  [/^readings\.rangesM(?:\.(\d+))?/, (m) => `range-${m[1] ?? 0}`],
  [/^readings\.roundTripNs(?:\.(\d+))?/, (m) => `rtt-${m[1] ?? 0}`],
  [/^readings\.phase(?:\.(\d+))?/, (m) => `phase-${m[1] ?? 0}`],
  [/^reflectancePct/, () => "reflectance"],
  [/^illuminanceKlux/, () => "illuminance"],
  [/^incidenceDeg/, () => "incidence"],
  [/^position/, () => "gps"],
  [/^note/, () => "note"],
  [/^(file|photo)/, () => "photo"],
];

export function fieldKeyOf(path: string): string {
  for (const [re, key] of RULES) {
    const m = path.match(re);
    if (m) return key(m);
  }
  return "form";
}

const LABELS: Record<string, string> = {
  target: "Target",
  distance: "Reference distance (m)",
  method: "How the distance was measured",
  tape: "Tape",
  tapeTemp: "Tape temperature (°C)",
  tension: "Pull (N)",
  support: "Tape support",
  spans: "Spans",
  station: "Station",
  edm: "Reference EDM",
  refUncertainty: "Reference uncertainty (mm)",
  ih: "Instrument height (m)",
  th: "Target height (m)",
  reflectance: "Reflectance (%)",
  illuminance: "Illuminance (klux)",
  incidence: "Incidence angle (°)",
  gps: "GPS fix",
  note: "Note",
  photo: "Photo",
  form: "Shot",
};

export function fieldLabelOf(path: string): string {
  const key = fieldKeyOf(path);
  const m = key.match(/^(range|rtt|phase)-(\d+)$/);
  if (m) {
    const n = Number(m[2]) + 1;
    return m[1] === "range" ? `Sensor range ${n} (m)` : m[1] === "rtt" ? `Round-trip time ${n} (ns)` : `Correlation samples ${n}`;
  }
  return LABELS[key] ?? path;
}

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
