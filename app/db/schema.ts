// The whole Shotbook data model. Units are in the column names (…M, …Mm, …Ppm, …Klux).
// Raw field observations are kept verbatim as JSON; computed columns are the server's,
// recomputed from the raw inputs whenever a spec or rule changes.
import { sql } from "drizzle-orm";
import { index, integer, primaryKey, real, sqliteTable, text, uniqueIndex } from "drizzle-orm/sqlite-core";

export const ROLES = ["admin", "qa", "crew", "viewer"] as const;
export type Role = (typeof ROLES)[number];

const id = () =>
  text("id")
    .primaryKey()
    .$defaultFn(() => crypto.randomUUID());
const createdAt = () =>
  text("created_at")
    .notNull()
    .default(sql`(strftime('%Y-%m-%dT%H:%M:%fZ','now'))`);

// ---------- people and sign-in ----------
export const users = sqliteTable("users", {
  id: id(),
  email: text("email").notNull().unique(),
  name: text("name").notNull().default(""),
  role: text("role", { enum: ROLES }).notNull().default("viewer"),
  active: integer("active", { mode: "boolean" }).notNull().default(true),
  invitedBy: text("invited_by"),
  createdAt: createdAt(),
  lastSignInAt: text("last_sign_in_at"),
});

/** Server-side session rows: the cookie carries only the id, so an admin can revoke. */
export const authSessions = sqliteTable(
  "auth_sessions",
  {
    id: id(),
    userId: text("user_id")
      .notNull()
      .references(() => users.id),
    createdAt: createdAt(),
    expiresAt: text("expires_at").notNull(),
    lastSeenAt: text("last_seen_at"),
    revokedAt: text("revoked_at"),
    userAgent: text("user_agent"),
    ip: text("ip"),
  },
  (t) => [index("auth_sessions_user").on(t.userId)],
);

/** One-time sign-in codes (hash only), with tries and use, for expiry and reuse checks. */
export const loginCodes = sqliteTable(
  "login_codes",
  {
    id: id(),
    email: text("email").notNull(),
    codeHash: text("code_hash").notNull(),
    createdAt: createdAt(),
    expiresAt: text("expires_at").notNull(),
    attempts: integer("attempts").notNull().default(0),
    usedAt: text("used_at"),
    ip: text("ip"),
  },
  (t) => [index("login_codes_email").on(t.email)],
);

/** Fixed-window counters shared by every app instance (per address, per client IP…). */
export const rateLimits = sqliteTable(
  "rate_limits",
  {
    key: text("key").notNull(),
    windowStart: text("window_start").notNull(),
    count: integer("count").notNull().default(0),
  },
  (t) => [primaryKey({ columns: [t.key, t.windowStart] })],
);

export const apiTokens = sqliteTable("api_tokens", {
  id: id(),
  userId: text("user_id")
    .notNull()
    .references(() => users.id),
  name: text("name").notNull(),
  tokenHash: text("token_hash").notNull().unique(),
  createdAt: createdAt(),
  lastUsedAt: text("last_used_at"),
  revokedAt: text("revoked_at"),
});

// ---------- registry ----------
export const projects = sqliteTable("projects", {
  id: id(),
  name: text("name").notNull(),
  client: text("client").notNull().default(""),
  minShots: integer("min_shots").notNull().default(20),
  coverageK: real("coverage_k").notNull().default(2),
  minWithinPct: real("min_within_pct").notNull().default(95),
  /** Lower edges of the range bands in metres, e.g. [0,10,30,100]. */
  rangeBandEdgesM: text("range_band_edges_m", { mode: "json" })
    .$type<number[]>()
    .notNull()
    .default(sql`'[0,10,30,100]'`),
  // issue 15: reference uncertainty and statement style of the rule (ranging.md §7)
  referenceRatio: real("reference_ratio").notNull().default(2),
  referenceInVerdict: integer("reference_in_verdict", { mode: "boolean" }).notNull().default(false),
  statement: text("statement", { enum: ["rmse", "nssda95"] })
    .notNull()
    .default("rmse"),
  edmUncertaintyMm: real("edm_uncertainty_mm"),
  edmUncertaintyPpm: real("edm_uncertainty_ppm"),
  notes: text("notes").notNull().default(""),
  createdAt: createdAt(),
  updatedAt: text("updated_at"),
  retiredAt: text("retired_at"),
});

export const projectSensors = sqliteTable(
  "project_sensors",
  {
    projectId: text("project_id")
      .notNull()
      .references(() => projects.id),
    sensorId: text("sensor_id")
      .notNull()
      .references(() => sensors.id),
  },
  (t) => [primaryKey({ columns: [t.projectId, t.sensorId] })],
);

export const projectSites = sqliteTable(
  "project_sites",
  {
    projectId: text("project_id")
      .notNull()
      .references(() => projects.id),
    siteId: text("site_id")
      .notNull()
      .references(() => sites.id),
  },
  (t) => [primaryKey({ columns: [t.projectId, t.siteId] })],
);

/** Who may see and work on a project's records (issue 14). Admins see every project without a row. */
export const projectMembers = sqliteTable(
  "project_members",
  {
    projectId: text("project_id")
      .notNull()
      .references(() => projects.id),
    userId: text("user_id")
      .notNull()
      .references(() => users.id),
    addedBy: text("added_by").references(() => users.id),
    addedAt: createdAt(),
  },
  (t) => [primaryKey({ columns: [t.projectId, t.userId] }), index("project_members_user").on(t.userId)],
);

export const sensors = sqliteTable("sensors", {
  id: id(),
  label: text("label").notNull(),
  serial: text("serial").notNull(),
  kind: text("kind", { enum: ["pulsed", "cw"] }).notNull(),
  wavelengthNm: real("wavelength_nm").notNull(),
  modulationHz: text("modulation_hz", { mode: "json" })
    .$type<number[]>()
    .notNull()
    .default(sql`'[]'`),
  appliesAirCorrection: integer("applies_air_correction", { mode: "boolean" }).notNull(),
  /** N_ref in ppm, (n−1)·10⁶ the sensor assumes; 0 = vacuum speed of light. */
  assumedRefractivity: real("assumed_refractivity").notNull().default(0),
  toleranceMm: real("tolerance_mm").notNull(),
  tolerancePpm: real("tolerance_ppm").notNull(),
  outdoor: integer("outdoor", { mode: "boolean" }).notNull().default(true),
  calibrationDue: text("calibration_due"),
  // issue 15: IEC 60825-1 class ("1", "1M", "2", "2M", "3R", "3B", "4")
  laserClass: text("laser_class"),
  // issue 15: calibration certificate (ranging.md §7 traceability)
  certNumber: text("cert_number"),
  certLaboratory: text("cert_laboratory"),
  certIssued: text("cert_issued"),
  certDue: text("cert_due"),
  notes: text("notes").notNull().default(""),
  createdAt: createdAt(),
  updatedAt: text("updated_at"),
  retiredAt: text("retired_at"),
  // ---- issue 18: depth cameras (ranging.md §8): pinhole intrinsics (pixels) and mm per depth unit ----
  intrinsics: text("intrinsics", { mode: "json" }).$type<{ fx: number; fy: number; cx: number; cy: number }>(),
  depthScaleMm: real("depth_scale_mm"),
});

export const tapes = sqliteTable("tapes", {
  id: id(),
  label: text("label").notNull(),
  standardTempC: real("standard_temp_c").notNull(),
  standardTensionN: real("standard_tension_n").notNull(),
  areaMm2: real("area_mm2").notNull(),
  modulusGPa: real("modulus_gpa").notNull(),
  weightNPerM: real("weight_n_per_m").notNull(),
  /** Certificate correction, positive when the tape is longer than nominal. */
  calibrationPpm: real("calibration_ppm").notNull().default(0),
  // issue 15: the certificate's standard uncertainty a + b·L (mm, ppm), k = 1
  uncertaintyMm: real("uncertainty_mm"),
  uncertaintyPpm: real("uncertainty_ppm"),
  // issue 15: calibration certificate (ranging.md §7 traceability)
  certNumber: text("cert_number"),
  certLaboratory: text("cert_laboratory"),
  certIssued: text("cert_issued"),
  certDue: text("cert_due"),
  notes: text("notes").notNull().default(""),
  createdAt: createdAt(),
  updatedAt: text("updated_at"),
  retiredAt: text("retired_at"),
});

export const sites = sqliteTable("sites", {
  id: id(),
  name: text("name").notNull(),
  lat: real("lat"),
  lon: real("lon"),
  notes: text("notes").notNull().default(""),
  createdAt: createdAt(),
  updatedAt: text("updated_at"),
  retiredAt: text("retired_at"),
});

export const stations = sqliteTable(
  "stations",
  {
    id: id(),
    siteId: text("site_id")
      .notNull()
      .references(() => sites.id),
    label: text("label").notNull(),
    gridE: real("grid_e"),
    gridN: real("grid_n"),
    gridH: real("grid_h"),
    lat: real("lat"),
    lon: real("lon"),
    h: real("h"),
    retiredAt: text("retired_at"),
    /** issue 15: 1-D standard uncertainty of the surveyed point (mm) */
    sigmaMm: real("sigma_mm"),
  },
  (t) => [index("stations_site").on(t.siteId)],
);

export const targets = sqliteTable(
  "targets",
  {
    id: id(),
    siteId: text("site_id")
      .notNull()
      .references(() => sites.id),
    label: text("label").notNull(),
    reflectancePct: real("reflectance_pct").notNull(),
    retro: integer("retro", { mode: "boolean" }).notNull().default(false),
    /** Surveyed reference distance from the site's main station, when known. */
    referenceM: real("reference_m"),
    gridE: real("grid_e"),
    gridN: real("grid_n"),
    gridH: real("grid_h"),
    lat: real("lat"),
    lon: real("lon"),
    h: real("h"),
    retiredAt: text("retired_at"),
    /** issue 15: 1-D standard uncertainty of the surveyed point (mm) */
    sigmaMm: real("sigma_mm"),
  },
  (t) => [index("targets_site").on(t.siteId)],
);

// ---------- field records (client-made UUIDs) ----------
export const checkSessions = sqliteTable(
  "check_sessions",
  {
    id: text("id").primaryKey(),
    sensorId: text("sensor_id")
      .notNull()
      .references(() => sensors.id),
    siteId: text("site_id")
      .notNull()
      .references(() => sites.id),
    projectId: text("project_id").references(() => projects.id),
    startedAt: text("started_at").notNull(),
    airTempC: real("air_temp_c"),
    pressureHpa: real("pressure_hpa"),
    humidityPct: real("humidity_pct"),
    note: text("note"),
    /** The record exactly as the tablet sent it (canonical JSON), for duplicate checks. */
    raw: text("raw").notNull(),
    deviceId: text("device_id").notNull(),
    syncedBy: text("synced_by").references(() => users.id),
    receivedAt: createdAt(),
  },
  (t) => [index("check_sessions_sensor").on(t.sensorId, t.startedAt)],
);

export const shots = sqliteTable(
  "shots",
  {
    id: text("id").primaryKey(),
    sessionId: text("session_id")
      .notNull()
      .references(() => checkSessions.id),
    sensorId: text("sensor_id")
      .notNull()
      .references(() => sensors.id),
    takenAt: text("taken_at").notNull(),
    targetId: text("target_id").references(() => targets.id),
    raw: text("raw").notNull(),
    referenceMethod: text("reference_method", { enum: ["tape", "edm", "coordinates"] }).notNull(),
    reflectancePct: real("reflectance_pct").notNull(),
    illuminanceKlux: real("illuminance_klux"),
    incidenceDeg: real("incidence_deg"),
    lat: real("lat"),
    lon: real("lon"),
    accuracyM: real("accuracy_m"),
    note: text("note"),
    deviceId: text("device_id").notNull(),
    syncedBy: text("synced_by").references(() => users.id),
    receivedAt: createdAt(),
    // computed by the server from raw with app/domain
    referenceM: real("reference_m").notNull(),
    rangeM: real("range_m").notNull(),
    errorMm: real("error_mm").notNull(),
    toleranceMm: real("tolerance_mm").notNull(),
    limitMm: real("limit_mm").notNull(),
    within: integer("within", { mode: "boolean" }).notNull(),
    repeatabilityMm: real("repeatability_mm"),
    readingsCount: integer("readings_count").notNull().default(1),
    wrap: integer("wrap", { mode: "boolean" }).notNull().default(false),
    unambiguousM: real("unambiguous_m"),
    retro: integer("retro", { mode: "boolean" }).notNull().default(false),
    airDefaulted: integer("air_defaulted", { mode: "boolean" }).notNull().default(false),
    excluded: integer("excluded", { mode: "boolean" }).notNull().default(false),
    computedAt: text("computed_at").notNull(),
    /** issue 15: u_ref of ranging.md §7 (mm, k = 1), computed with the rest; null = unknown */
    referenceUncertaintyMm: real("reference_uncertainty_mm"),
  },
  (t) => [
    index("shots_sensor_taken").on(t.sensorId, t.takenAt, t.id),
    index("shots_session").on(t.sessionId),
    // issue 16: a sensor's included errors in ascending order straight from the index (the
    // report's exact median, MAD and P95|e| without reading the rows or sorting them); the
    // columns after error_mm make it cover the report's grouped sums and a member's session
    // filter too, so neither reads the table rows (which carry the raw record)
    index("shots_sensor_error").on(t.sensorId, t.excluded, t.errorMm, t.sessionId, t.referenceM, t.reflectancePct, t.retro, t.illuminanceKlux, t.referenceUncertaintyMm, t.airDefaulted),
    // issue 16: which tape or reference EDM each session of a sensor used, per day (traceability),
    // from the index instead of parsing every shot's raw record
    index("shots_sensor_uses").on(
      t.sensorId,
      t.sessionId,
      // (->> rather than json_extract: drizzle-kit splits an index expression at its commas)
      sql`(raw ->> '$.reference.tape.tapeId')`,
      sql`(raw ->> '$.reference.edmId')`,
      t.takenAt,
      t.referenceMethod,
    ),
    // issue 16 (q16): the few wrapped shots of a sensor without reading every row (the report
    // page's series reads everything else from shots_sensor_error); partial, so it costs an
    // insert nothing unless the shot wrapped
    index("shots_sensor_wrap")
      .on(t.sensorId)
      .where(sql`wrap = 1`),
    // issue 16 (v16): the shot table's default order (largest |error| first) pages from this index
    // instead of sorting every row of the sensor (0.5 s of server CPU per page at 100,000 shots);
    // ties by id are sorted within one |error| value only
    index("shots_sensor_abs_error").on(t.sensorId, sql`abs(error_mm)`),
  ],
);

/** QA exclusions: never deleted; a restore closes the row and both land in the audit trail. */
export const exclusions = sqliteTable(
  "exclusions",
  {
    id: id(),
    shotId: text("shot_id")
      .notNull()
      .references(() => shots.id),
    reason: text("reason").notNull(),
    byUserId: text("by_user_id")
      .notNull()
      .references(() => users.id),
    createdAt: createdAt(),
    restoredAt: text("restored_at"),
    restoredBy: text("restored_by").references(() => users.id),
    restoreReason: text("restore_reason"),
  },
  (t) => [index("exclusions_shot").on(t.shotId)],
);

export const signOffs = sqliteTable(
  "sign_offs",
  {
    id: id(),
    sensorId: text("sensor_id")
      .notNull()
      .references(() => sensors.id),
    projectId: text("project_id").references(() => projects.id),
    decision: text("decision", { enum: ["approved", "rejected"] }).notNull(),
    periodFrom: text("period_from"),
    periodTo: text("period_to"),
    sessionIds: text("session_ids", { mode: "json" })
      .$type<string[]>()
      .notNull()
      .default(sql`'[]'`),
    verdict: text("verdict", { enum: ["pass", "fail", "insufficient"] }).notNull(),
    biasMm: real("bias_mm"),
    /** The full report as it stood when signed, frozen. */
    snapshot: text("snapshot", { mode: "json" }).notNull(),
    note: text("note").notNull().default(""),
    byUserId: text("by_user_id")
      .notNull()
      .references(() => users.id),
    createdAt: createdAt(),
  },
  (t) => [index("sign_offs_sensor").on(t.sensorId, t.createdAt)],
);

export const auditLog = sqliteTable(
  "audit_log",
  {
    id: id(),
    at: createdAt(),
    actorUserId: text("actor_user_id"),
    action: text("action").notNull(),
    entity: text("entity").notNull(),
    entityId: text("entity_id"),
    detail: text("detail", { mode: "json" }),
  },
  (t) => [index("audit_entity").on(t.entity, t.entityId)],
);

export const photos = sqliteTable(
  "photos",
  {
    id: id(),
    shotId: text("shot_id")
      .notNull()
      .references(() => shots.id),
    contentType: text("content_type").notNull(),
    bytes: integer("bytes").notNull(),
    sha256: text("sha256").notNull(),
    path: text("path").notNull(),
    uploadedBy: text("uploaded_by").references(() => users.id),
    createdAt: createdAt(),
  },
  (t) => [index("photos_shot").on(t.shotId), uniqueIndex("photos_shot_sha").on(t.shotId, t.sha256)],
);

export const mailLog = sqliteTable("mail_log", {
  id: id(),
  at: createdAt(),
  to: text("to").notNull(),
  subject: text("subject").notNull(),
  template: text("template").notNull(),
  status: text("status", { enum: ["sent", "failed", "pending"] }).notNull(),
  attempts: integer("attempts").notNull().default(1),
  error: text("error"),
  messageId: text("message_id"),
  /** Kept so a failed mail can be retried. */
  payload: text("payload", { mode: "json" }),
});

/** Column mapping of a sensor's own CSV export, remembered once per sensor. */
export const importMappings = sqliteTable("import_mappings", {
  sensorId: text("sensor_id")
    .primaryKey()
    .references(() => sensors.id),
  mapping: text("mapping", { mode: "json" }).$type<Record<string, string>>().notNull(),
  updatedAt: text("updated_at").notNull(),
  updatedBy: text("updated_by").references(() => users.id),
});

// ---------- issue 15: reference EDMs and certificate due-date notices ----------
/** Reference EDMs (total stations, distance meters) whose certificates make EDM references traceable. */
export const edms = sqliteTable("edms", {
  id: id(),
  label: text("label").notNull(),
  serial: text("serial").notNull(),
  /** Standard uncertainty a + b·D (mm, ppm), k = 1. */
  uncertaintyMm: real("uncertainty_mm").notNull(),
  uncertaintyPpm: real("uncertainty_ppm").notNull().default(0),
  certNumber: text("cert_number"),
  certLaboratory: text("cert_laboratory"),
  certIssued: text("cert_issued"),
  certDue: text("cert_due"),
  notes: text("notes").notNull().default(""),
  createdAt: createdAt(),
  updatedAt: text("updated_at"),
  retiredAt: text("retired_at"),
});

/** One row per certificate (kind, id, number, due) whose 30-day notice went to the admins: never twice. */
export const certificateNotices = sqliteTable(
  "certificate_notices",
  {
    kind: text("kind", { enum: ["sensor", "tape", "edm"] }).notNull(),
    entityId: text("entity_id").notNull(),
    number: text("number").notNull(),
    due: text("due").notNull(),
    sentAt: createdAt(),
  },
  (t) => [primaryKey({ columns: [t.kind, t.entityId, t.number, t.due] })],
);

// ---------- issue 12: QA re-shoot requests ----------
/** QA asks the crew to shoot a sensor again at a site (what, why); shown on the tablet while open. */
export const reshootRequests = sqliteTable(
  "reshoot_requests",
  {
    id: id(),
    sensorId: text("sensor_id")
      .notNull()
      .references(() => sensors.id),
    siteId: text("site_id")
      .notNull()
      .references(() => sites.id),
    /** The project the request is for; null: any project holding the sensor and the site. */
    projectId: text("project_id").references(() => projects.id),
    wanted: text("wanted").notNull(),
    reason: text("reason").notNull(),
    byUserId: text("by_user_id")
      .notNull()
      .references(() => users.id),
    createdAt: createdAt(),
    state: text("state", { enum: ["open", "done", "withdrawn"] })
      .notNull()
      .default("open"),
    closedAt: text("closed_at"),
    closedBy: text("closed_by").references(() => users.id),
  },
  (t) => [index("reshoot_requests_sensor").on(t.sensorId, t.createdAt), index("reshoot_requests_site").on(t.siteId)],
);

// ---------- issue 14: the project verification report, numbered and versioned ----------
/**
 * Every version of a project's verification report the client may have received: the content
 * exactly as hashed (RFC 8785 canonical JSON) and its SHA-256. Never updated or deleted; a new
 * version is written whenever the content differs from the last one.
 */
export const projectReportVersions = sqliteTable(
  "project_report_versions",
  {
    projectId: text("project_id")
      .notNull()
      .references(() => projects.id),
    version: integer("version").notNull(),
    content: text("content").notNull(),
    sha256: text("sha256").notNull(),
    createdAt: createdAt(),
    createdBy: text("created_by").references(() => users.id),
  },
  (t) => [primaryKey({ columns: [t.projectId, t.version] })],
);

// ---------- issue 14 (p14): the tapes and reference EDMs a project uses ----------
/**
 * Which tapes a project's crews may use (scoping like project_sensors): a tablet copies only its
 * projects' tapes, and a shot naming a tape its session's project does not list is refused.
 */
export const projectTapes = sqliteTable(
  "project_tapes",
  {
    projectId: text("project_id")
      .notNull()
      .references(() => projects.id),
    tapeId: text("tape_id")
      .notNull()
      .references(() => tapes.id),
  },
  (t) => [primaryKey({ columns: [t.projectId, t.tapeId] }), index("project_tapes_tape").on(t.tapeId)],
);

/** Which reference EDMs a project's crews may use (as project_tapes). */
export const projectEdms = sqliteTable(
  "project_edms",
  {
    projectId: text("project_id")
      .notNull()
      .references(() => projects.id),
    edmId: text("edm_id")
      .notNull()
      .references(() => edms.id),
  },
  (t) => [primaryKey({ columns: [t.projectId, t.edmId] }), index("project_edms_edm").on(t.edmId)],
);

/**
 * issue 16: a sensor report's group sums kept as shots are written (docs/decisions/0010). One row
 * per (sensor, session, exclusion, reflectance class, illuminance band, whole metre of the
 * reference distance), maintained by SQL triggers on shots (insert, update of a summed column,
 * delete; migration "report_sums_triggers"), so every writer — sync, exclusions, recomputes,
 * seeds — keeps it without knowing of it. The sums are shifted by the group's own first shot
 * (k_e, k_d) to stay accurate from one pass; a report moves them to its own shift. The whole
 * metre (dbin) lets any rule with whole-metre band edges regroup them exactly (D < edge ⇔
 * floor(D) < edge). "within" is not kept (it depends on the rule's k): the report counts the
 * few shots outside their limit from the error index.
 */
export const reportSums = sqliteTable(
  "report_sums",
  {
    sensorId: text("sensor_id").notNull(),
    sessionId: text("session_id").notNull(),
    /** shots.excluded (not "excluded": that name is taken by the upsert's proposed row) */
    excl: integer("excl").notNull(),
    /** 0 dark, 1 mid, 2 bright, 3 retro (app/domain reflectanceIndex) */
    rc: integer("rc").notNull(),
    /** −1 none, 0 low, 1 moderate, 2 high (app/domain illuminanceIndex) */
    lb: integer("lb").notNull(),
    /** floor(reference_m) */
    dbin: integer("dbin").notNull(),
    n: integer("n").notNull(),
    kE: real("k_e").notNull(),
    kD: real("k_d").notNull(),
    /** Σ(e − k_e), Σ(e − k_e)², Σe² */
    s1: real("s1").notNull(),
    s2: real("s2").notNull(),
    sq: real("sq").notNull(),
    /** Σ(D − k_d), Σ(D − k_d)², Σ(D − k_d)(e − k_e), ΣD */
    d1: real("d1").notNull(),
    d2: real("d2").notNull(),
    de: real("de").notNull(),
    sumD: real("sum_d").notNull(),
    /** Σu_ref² of the shots with a known u_ref, and the count of the others */
    sumU2: real("sum_u2").notNull(),
    unknownU: integer("unknown_u").notNull(),
    /** counts (not flags, so a delete can take one away): shots in bright sun, with defaulted air */
    sun: integer("sun").notNull(),
    air: integer("air").notNull(),
  },
  (t) => [primaryKey({ columns: [t.sensorId, t.sessionId, t.excl, t.rc, t.lb, t.dbin] })],
);
