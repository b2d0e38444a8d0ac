// What a session's screens read from IndexedDB: the session, its reference context and shots.
import { fieldDb } from "~/offline/db";
import type { PreviewContext } from "~/offline/preview";
import { readReference, type ReferenceCopy } from "~/offline/reference";
import type { LocalSession, LocalShot } from "~/offline/types";

export type SessionData = {
  session: LocalSession | null;
  reference: ReferenceCopy;
  shots: LocalShot[];
  photoShotIds: string[];
};

export async function loadSession(sessionId: string): Promise<SessionData> {
  const db = fieldDb();
  const [session, reference, shots] = await Promise.all([
    db.sessions.get(sessionId),
    readReference(),
    db.shots.where("sessionId").equals(sessionId).sortBy("queuedAt"),
  ]);
  const photos = shots.length ? await db.photos.where("shotId").anyOf(shots.map((s) => s.id)).toArray() : [];
  return { session: session ?? null, reference, shots, photoShotIds: photos.map((p) => p.shotId) };
}

export function contextOf(session: LocalSession, reference: ReferenceCopy): PreviewContext {
  return {
    sensor: reference.sensors.find((s) => s.id === session.record.sensorId),
    site: reference.sites.find((s) => s.id === session.record.siteId),
    tapes: reference.tapes,
    edms: reference.edms ?? [],
    project: session.record.projectId ? reference.projects.find((p) => p.id === session.record.projectId) : undefined,
  };
}
