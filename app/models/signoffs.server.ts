// Sign-offs (the report frozen into sign_offs.snapshot, mail to the crew who logged the shots and
// to the admins) and the failed-verdict notice to QA. The review screens' reads are in
// review.server.ts.
import { and, asc, desc, eq, inArray, sql } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { auditLog, checkSessions, projectMembers, projects, projectSensors, sensors, shots, signOffs, users } from "~/db/schema";
import { audit, auditOffThread } from "~/models/audit.server";
import { sendTemplateMail } from "~/mail/mailer.server";
import { listUserEmailsByRole } from "~/models/users.server";
import { computeSensorReport, sensorReportSummary } from "~/models/reports.server";
import { explainVerdict } from "~/domain";
import type { ReportJson } from "~/contract/report";
import { accuracyStatement, verdictFailures } from "~/domain";
import type { SignOffInput } from "~/contract/signoff";
import type { Actor } from "~/models/actor";
import { AppError, appErrorOf } from "~/contract/errors";
import { canSeeSensor, projectColInScope, scopeOf } from "~/models/scope.server";
import { reportFor } from "./review.server";

/** Who acts when the server itself asks (the notice after a sync). */
const SYSTEM: Actor = { id: "system", role: "admin", name: "Shotbook" };

export type SignOffRow = {
  id: string;
  decision: "approved" | "rejected";
  verdict: "pass" | "fail" | "insufficient";
  projectId: string | null;
  projectName: string | null;
  periodFrom: string | null;
  periodTo: string | null;
  biasMm: number | null;
  note: string;
  byName: string;
  createdAt: string;
};

/** The sensor's sign-offs the actor may see: those of their projects (issue 14; no project: admins only). */
export async function listSignOffs(actor: Actor, sensorId: string, limit = 20): Promise<SignOffRow[]> {
  const scope = await scopeOf(actor);
  const rows = await getDb()
    .select({
      id: signOffs.id,
      decision: signOffs.decision,
      verdict: signOffs.verdict,
      projectId: signOffs.projectId,
      projectName: projects.name,
      periodFrom: signOffs.periodFrom,
      periodTo: signOffs.periodTo,
      biasMm: signOffs.biasMm,
      note: signOffs.note,
      byName: users.name,
      byEmail: users.email,
      createdAt: signOffs.createdAt,
    })
    .from(signOffs)
    .innerJoin(users, eq(users.id, signOffs.byUserId))
    .leftJoin(projects, eq(projects.id, signOffs.projectId))
    .where(and(eq(signOffs.sensorId, sensorId), projectColInScope(scope, signOffs.projectId)))
    .orderBy(desc(signOffs.createdAt))
    .limit(limit);
  return rows.map(({ byEmail, ...r }) => ({ ...r, byName: r.byName || byEmail }));
}

export async function getSignOff(actor: Actor, id: string) {
  const scope = await scopeOf(actor);
  const [row] = await getDb()
    .select()
    .from(signOffs)
    .where(and(eq(signOffs.id, id), projectColInScope(scope, signOffs.projectId)))
    .limit(1);
  return row ?? null;
}

/** Addresses of the active users who synced any shot of these sessions of the sensor. */
async function crewEmails(sensorId: string, sessionIds: string[]) {
  if (sessionIds.length === 0) return [];
  const db = getDb();
  const out = new Set<string>();
  for (let i = 0; i < sessionIds.length; i += 400) {
    const rows = await db
      .selectDistinct({ email: users.email })
      .from(shots)
      .innerJoin(users, eq(users.id, shots.syncedBy))
      .where(and(eq(shots.sensorId, sensorId), inArray(shots.sessionId, sessionIds.slice(i, i + 400)), eq(users.active, true)));
    rows.forEach((r) => out.add(r.email));
  }
  return [...out].sort();
}

export type SignOffResult = { id: string; verdict: ReportJson["verdict"]; recipients: string[]; mailOk: boolean };

/**
 * Approves or rejects a sensor for a project and period. The report as it stands is frozen
 * into the row; approving a sensor whose verdict is not "pass" needs a note saying why.
 */
export async function createSignOff(actor: Actor, sensorId: string, input: Omit<SignOffInput, "intent">): Promise<SignOffResult> {
  if (actor.role !== "qa" && actor.role !== "admin") throw new AppError(403, "Only QA or an admin may sign a sensor off.");
  const db = getDb();
  const scope = await scopeOf(actor, db);
  const [sensor] = await db.select({ id: sensors.id, label: sensors.label, serial: sensors.serial }).from(sensors).where(eq(sensors.id, sensorId)).limit(1);
  // issue 14: a sensor outside the actor's projects is "no such sensor"
  if (!sensor || !(await canSeeSensor(scope, sensorId, db))) throw new AppError(404, "No such sensor.");
  // issue 14: a sign-off is per project and sensor. A QA member signs off for a project they
  // belong to (implied when exactly one of theirs holds the sensor). An admin names the project
  // too whenever the sensor is in one (listed or used by its sessions): a sign-off freezes only
  // its project's shots, so "the whole history" is left for a sensor no project holds.
  let projectId = input.projectId || null;
  if (!projectId && scope.all) {
    const holding = await db
      .select({ name: projects.name })
      .from(projects)
      .where(
        sql`${projects.id} IN (SELECT ${projectSensors.projectId} FROM ${projectSensors} WHERE ${projectSensors.sensorId} = ${sensorId} UNION SELECT ${checkSessions.projectId} FROM ${checkSessions} WHERE ${checkSessions.sensorId} = ${sensorId})`,
      )
      .orderBy(asc(projects.name));
    if (holding.length) {
      throw new AppError(400, `This sensor is used by ${holding.map((p) => p.name).join(", ")}: choose the project this sign-off is for (it freezes that project's shots only).`, "projectId");
    }
  }
  if (!projectId && !scope.all) {
    const mine = await db
      .select({ id: projectSensors.projectId })
      .from(projectSensors)
      .where(and(eq(projectSensors.sensorId, sensorId), projectColInScope(scope, projectSensors.projectId)));
    if (mine.length !== 1) throw new AppError(400, "Choose the project this sign-off is for.", "projectId");
    projectId = mine[0]!.id;
  }
  let projectName: string | null = null;
  if (projectId) {
    const [p] = await db
      .select({ name: projects.name })
      .from(projects)
      .where(and(eq(projects.id, projectId), projectColInScope(scope, projects.id)))
      .limit(1);
    if (!p) throw new AppError(400, "No such project.", "projectId");
    projectName = p.name;
  }
  // the shots of the sign-off's project only (ranging.md's report, for that project's sessions)
  const rc = await computeSensorReport(
    actor,
    sensorId,
    { ...(input.from ? { from: input.from } : {}), ...(input.to ? { to: input.to } : {}), ...(projectId ? { projectId } : {}) },
    projectId ? { onlyProjectIds: [projectId] } : {},
  );
  if (rc.status !== 200 && !(rc.status === 404 && rc.body.error.startsWith("No sensor"))) throw appErrorOf(rc);
  const report = rc.status === 200 ? (rc.body as unknown as ReportJson) : null;
  if (!report) throw new AppError(404, "No such sensor.");
  if (report.n + report.excluded === 0) throw new AppError(400, "There are no shots in this selection to sign off.", "from");
  const note = input.note ?? "";
  if (input.decision === "approved" && report.verdict !== "pass" && !note) {
    throw new AppError(400, `The verdict is "${report.verdict}": approving it anyway needs a note saying why.`, "note");
  }
  const sessionIds = [...new Set(report.shots.map((s) => s.sessionId))].sort();
  const [row] = await db
    .insert(signOffs)
    .values({
      sensorId,
      projectId,
      decision: input.decision,
      periodFrom: input.from ?? null,
      periodTo: input.to ?? null,
      sessionIds,
      verdict: report.verdict,
      biasMm: report.biasMm,
      snapshot: report,
      note,
      byUserId: actor.id,
    })
    .returning({ id: signOffs.id });
  const id = row!.id;
  await audit(actor.id, `sign-off.${input.decision}`, "sensor", sensorId, {
    signOffId: id,
    verdict: report.verdict,
    projectId,
    from: input.from ?? null,
    to: input.to ?? null,
    n: report.n,
    biasMm: report.biasMm,
  });

  const crew = await crewEmails(sensorId, sessionIds);
  const admins = await listUserEmailsByRole(["admin"]);
  const recipients = [...new Set([...crew, ...admins])].filter((e) => e !== actor.email);
  const period = input.from || input.to ? `period ${input.from ?? "start"} to ${input.to ?? "today"}` : "all shots";
  const mail = await sendTemplateMail("sensor-signed-off", recipients, {
    sensorId,
    sensorLabel: `${sensor.label} (${sensor.serial})`,
    decision: input.decision,
    byName: actor.name || actor.email || "QA",
    // issue 15: the mail leads with the rule's accuracy statement (ranging.md §7)
    statement: accuracyStatement(report, report.statement).sentence,
    expired: expiredSummary(report),
    note: [`Verdict ${report.verdict}, ${report.n} shots, bias ${report.biasMm == null ? "—" : report.biasMm.toFixed(2)} mm; ${projectName ? `project ${projectName}, ` : ""}${period}.`, note]
      .filter(Boolean)
      .join(" "),
    reportUrl: `/review/sensors/${sensorId}`,
  });
  return { id, verdict: report.verdict, recipients, mailOk: mail.ok };
}

/** issue 15: certificates past due on some sessions of the report, as one line (or ""). */
function expiredSummary(report: ReportJson): string {
  const late = report.traceability.filter((t) => t.expiredOnSessions.length > 0);
  return late.map((t) => `${t.kind} ${t.label} certificate ${t.number ?? ""} due ${t.due} was past due on ${t.expiredOnSessions.length} session(s)`).join("; ");
}

const VERDICT_SEEN = "sensor.verdict";

/** issue 14: the active QA users who are members of a project of the sensor (listed or used). */
async function qaWhoSee(sensorId: string): Promise<string[]> {
  const qa = await listUserEmailsByRole(["qa"]);
  if (!qa.length) return [];
  const rows = await getDb()
    .selectDistinct({ email: users.email })
    .from(projectMembers)
    .innerJoin(users, eq(users.id, projectMembers.userId))
    .where(and(eq(users.role, "qa"), eq(users.active, true), sensorIdInScopeOfProject(projectMembers.projectId, sensorId)));
  const ok = new Set(rows.map((r) => r.email));
  return qa.filter((e) => ok.has(e));
}

/** The project (column) lists the sensor or has a session of it. */
function sensorIdInScopeOfProject(projectCol: typeof projectMembers.projectId, sensorId: string) {
  return sql`(${projectCol} IN (SELECT ${projectSensors.projectId} FROM ${projectSensors} WHERE ${projectSensors.sensorId} = ${sensorId}) OR ${projectCol} IN (SELECT ${checkSessions.projectId} FROM ${checkSessions} WHERE ${checkSessions.sensorId} = ${sensorId}))`;
}

/**
 * After a sync: for each sensor whose overall verdict has turned to "fail" since the last
 * time this looked, mail a "sensor-failed" notice to the QA users. The last verdict seen is
 * kept in the audit trail, so a sensor that stays failed is not announced again.
 */
export async function notifyFailedVerdicts(sensorIds: string[]): Promise<{ notified: string[] }> {
  const db = getDb();
  const notified: string[] = [];
  for (const sensorId of [...new Set(sensorIds)]) {
    const [sensor] = await db.select({ label: sensors.label, serial: sensors.serial }).from(sensors).where(eq(sensors.id, sensorId)).limit(1);
    if (!sensor) continue;
    // issue 16: the figures without rows first (sums and the error index, kept while unchanged);
    // the rows only for the mail that explains a verdict turned to fail
    const summary = await sensorReportSummary(SYSTEM, sensorId);
    if (!summary) continue;
    const [seen] = await db
      .select({ detail: auditLog.detail })
      .from(auditLog)
      .where(and(eq(auditLog.entity, "sensor"), eq(auditLog.entityId, sensorId), eq(auditLog.action, VERDICT_SEEN)))
      .orderBy(desc(auditLog.at), desc(auditLog.id))
      .limit(1);
    const before = (seen?.detail as { verdict?: string } | null)?.verdict ?? null;
    if (before === summary.verdict) continue;
    // after a sync, while others may be writing: not on the request thread (issue 16)
    await auditOffThread(null, VERDICT_SEEN, "sensor", sensorId, { verdict: summary.verdict, from: before });
    if (summary.verdict !== "fail") continue;
    const report = await reportFor(SYSTEM, sensorId, {});
    if (!report) continue;
    const why = report.tests
      .filter((t) => verdictFailures([t], report.rule.referenceInVerdict).length > 0)
      .map((t) => `${t.name} ${t.value == null ? "—" : t.value.toFixed(2)} (limit ${t.limit.toFixed(2)})`)
      .join("; ");
    await sendTemplateMail("sensor-failed", await qaWhoSee(sensorId), {
      sensorId,
      sensorLabel: `${sensor.label} (${sensor.serial})`,
      biasMm: report.biasMm,
      rmseMm: report.rmseMm,
      withinPct: report.withinPct,
      statement: accuracyStatement(report, report.statement).sentence,
      summary: [explainVerdict({ verdict: report.verdict, tests: report.tests, shots: report.shots, coverageK: report.rule.coverageK }).flaggedLine, `Failed tests: ${why}.`]
        .filter(Boolean)
        .join("\n"),
      reportUrl: `/review/sensors/${sensorId}`,
    });
    notified.push(sensorId);
  }
  return { notified };
}
