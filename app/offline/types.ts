// Shapes of the tablet's queue and of its copy of the reference data. The records inside
// `record` are exactly the bodies POST /api/sync expects (api.md); the rest is
// the tablet's own bookkeeping (state, the server's answer, the instant preview).
import type { FieldError } from "~/contract";
import type { Rule, SensorSpec, TapeSpec } from "~/domain";

// The record shapes live in the contract (app/contract/sync.ts), derived from the schemas the
// server validates with; the names below are the tablet's.
import type { SessionRecord as SyncSessionRecord, ShotRecord as SyncShotRecord } from "~/contract";
export type { SyncSessionRecord, SyncShotRecord };
export type { ReferenceRecord as SyncReference, ScanFacts, FieldError } from "~/contract";
export type { Readings as SyncReadings } from "~/domain";

/** queued: waits to be sent; synced: the server accepted it (or already had it); rejected: the server said why. */
export type RecordState = "queued" | "synced" | "rejected";

/**
 * A queued record the server fails on (5xx while it answers other records): found by splitting
 * its batch until it stood alone. It stays queued and is sent on its own at the end of each run,
 * so it never holds back the rest; the crew sees the server's message and may fix or discard it.
 */
export type StuckMark = { message: string; status: number; at: string };

export type ShotPreview = {
  referenceM: number;
  rangeM: number;
  errorMm: number;
  limitMm: number;
  within: boolean;
  wrap: boolean;
  airDefaulted: string[];
};

export type LocalSession = {
  id: string;
  record: SyncSessionRecord;
  state: RecordState;
  errors: FieldError[];
  queuedAt: number;
  syncedAt?: string;
  result?: "accepted" | "duplicate";
  stuck?: StuckMark;
  /** Local only: the sky the crew picked and the illuminance it stands for (klux), the default of each shot. */
  sky?: string;
  illuminanceKlux?: number;
};

export type LocalShot = {
  id: string;
  sessionId: string;
  record: SyncShotRecord;
  state: RecordState;
  errors: FieldError[];
  queuedAt: number;
  syncedAt?: string;
  result?: "accepted" | "duplicate";
  preview: ShotPreview | null;
  /** The domain's message when the instant preview could not be computed. */
  previewError?: string;
  stuck?: StuckMark;
};

export type LocalPhoto = {
  id: string;
  shotId: string;
  blob: Blob;
  name: string;
  type: string;
  bytes: number;
  state: RecordState;
  errors: FieldError[];
  queuedAt: number;
  syncedAt?: string;
};

// ---------- reference data copied from GET /api/field/reference ----------
export type RefSensor = SensorSpec & {
  label: string;
  serial: string;
  calibrationDue: string | null;
  // issue 15: shown on the session screen before the first shot
  laserClass?: string | null;
  certNumber?: string | null;
  certDue?: string | null;
};
export type RefPoint = {
  id: string;
  label: string;
  grid: { e: number; n: number; h: number } | null;
  geo: { lat: number; lon: number; h: number } | null;
};
export type RefTarget = RefPoint & { reflectancePct: number; retro: boolean; referenceM: number | null };
export type RefSite = { id: string; name: string; lat: number | null; lon: number | null; stations: RefPoint[]; targets: RefTarget[] };
export type RefTape = TapeSpec & { id: string; label: string; uncertaintyMm?: number | null; uncertaintyPpm?: number | null; certNumber?: string | null; certDue?: string | null };
/** issue 15: a reference EDM the crew may name on an EDM shot. */
export type RefEdm = { id: string; label: string; serial: string; uncertaintyMm: number; uncertaintyPpm: number; certNumber: string | null; certDue: string | null };
export type RefProject = {
  id: string;
  name: string;
  client: string;
  rule: Rule;
  sensorIds: string[];
  siteIds: string[];
  /** issue 14: the tapes and reference EDMs this project lists (absent in copies made before them: any) */
  tapeIds?: string[];
  edmIds?: string[];
};
export type RefUser = { id: string; email: string; name: string; role: "admin" | "qa" | "crew" | "viewer" };
/** issue 12: an open re-shoot request QA sent for a sensor at a site. */
export type RefReshoot = { id: string; sensorId: string; siteId: string; projectId: string | null; wanted: string; reason: string; byName: string; createdAt: string };

export type FieldReference = {
  user: RefUser;
  sensors: RefSensor[];
  sites: RefSite[];
  tapes: RefTape[];
  projects: RefProject[];
  /** issue 15 (absent in copies made before it) */
  edms?: RefEdm[];
  /** issue 12: open re-shoot requests the user may see (absent in copies made before it) */
  reshoots?: RefReshoot[];
  copiedAt: string;
};

export type SyncStatus = {
  running: boolean;
  phase: "idle" | "records" | "photos";
  done: number;
  total: number;
  /** A 401 paused sending: the crew must sign in again; nothing is lost. */
  needsSignIn: boolean;
  lastError: string | null;
  lastSyncAt: string | null;
  nextRetryAt: string | null;
  /** ms since epoch of the last change: a "running" status older than a minute is a killed tab's. */
  updatedAt: number;
};
