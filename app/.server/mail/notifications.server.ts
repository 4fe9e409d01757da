/**
 * The four notifications and who gets them. Each is called inside the transaction of the event
 * it announces and only queues rows in the outbox (outbox.server.ts sends them). The words are
 * study-level only: study code and title, plan and model titles, versions, counts and the names
 * of the staff involved. No subject identifier, data row, flagged case or estimate is ever put
 * in a message: the link leads to the page, where the reader's own permissions apply. Messages
 * about a rerun are checked for its subject ids before they are queued (redaction.server.ts):
 * e-mail leaves the app's permission checks, so it is held to the rule of readers without subjects.
 */
import { and, eq, inArray } from "drizzle-orm";
import { t, type DbOrTx } from "../db/index.server";
import type { StudyRole } from "../db/schema";
import { redaction } from "../redaction.server";
import { rerunColumns, storedRerunDocument } from "../reruns/rerun-rows.server";
import { composeMessage } from "./compose";
import { appLink, queueMail } from "./outbox.server";

interface Recipient {
  id: string;
  email: string;
}

type Study = typeof t.studies.$inferSelect;

async function studyOf(tx: DbOrTx, studyId: string): Promise<Study> {
  const [s] = await tx.select().from(t.studies).where(eq(t.studies.id, studyId)).limit(1);
  if (!s) throw new Error(`No study ${studyId} to notify about.`);
  return s;
}

async function members(tx: DbOrTx, studyId: string, roles: StudyRole[]): Promise<Recipient[]> {
  return tx
    .select({ id: t.people.id, email: t.people.email })
    .from(t.studyMemberships)
    .innerJoin(t.people, eq(t.people.id, t.studyMemberships.personId))
    .where(and(eq(t.studyMemberships.studyId, studyId), inArray(t.studyMemberships.role, roles)));
}

/**
 * The study's sponsor readers: its members with the sponsor reader role, and the people who sign
 * in through their own organisation's provider (OpenID Connect) from an organisation the study is
 * shared with.
 */
async function sponsorReaders(tx: DbOrTx, studyId: string): Promise<Recipient[]> {
  const named = await members(tx, studyId, ["sponsor_reader"]);
  const shares = await tx
    .select({ organisation: t.studyShares.organisation })
    .from(t.studyShares)
    .where(eq(t.studyShares.studyId, studyId));
  const organisations = shares.map((s) => s.organisation);
  const fromShares = organisations.length
    ? await tx
        .select({ id: t.people.id, email: t.people.email })
        .from(t.people)
        .where(and(eq(t.people.identitySource, "oidc"), inArray(t.people.organisation, organisations)))
    : [];
  return [...named, ...fromShares];
}

async function nameOf(tx: DbOrTx, personId: string | null): Promise<string> {
  if (!personId) return "Someone";
  const [p] = await tx
    .select({ name: t.people.displayName })
    .from(t.people)
    .where(eq(t.people.id, personId))
    .limit(1);
  return p?.name ?? "Someone";
}

/**
 * Refuses a message about a rerun that names one of its subjects: the subjects its stored result
 * names (read, or as the compute thread answered them when the rerun has just completed, one a
 * line, so that completing a large rerun never reads its result back).
 */
async function checkedForSubjects<T>(
  message: T,
  rerun: { id: string; resultSha256: string | null },
  subjectIds?: string,
): Promise<T> {
  const check =
    subjectIds !== undefined
      ? redaction(false, [], subjectIds.split("\n"))
      : redaction(false, [await storedRerunDocument(rerun)]);
  return check.assertClean(message, "A notification");
}

const utc = (iso: string): string => `${iso.slice(0, 16).replace("T", " ")} UTC`;
const plural = (n: number, one: string, many = `${one}s`): string => `${n} ${n === 1 ? one : many}`;
const studyFact = (s: Study): [string, string] => ["Study", `${s.code}, ${s.title}`];

export const notificationPaths = {
  planVersion: (studyId: string, versionId: string) => `/studies/${studyId}/plans/${versionId}`,
  rerun: (studyId: string, rerunId: string) => `/studies/${studyId}/reruns/${rerunId}`,
  report: (studyId: string, rerunId: string) => `/studies/${studyId}/reports/${rerunId}`,
  appendix: (studyId: string) => `/studies/${studyId}/appendix`,
};

/** A plan version was submitted: tell the study's biostatisticians who may approve it (not its author, editors or submitter). */
export async function notifyPlanAwaitsApproval(
  tx: DbOrTx,
  input: { studyId: string; versionId: string; submittedBy: string },
): Promise<void> {
  const study = await studyOf(tx, input.studyId);
  const [row] = await tx
    .select({ v: t.planVersions, plan: t.analysisPlans })
    .from(t.planVersions)
    .innerJoin(t.analysisPlans, eq(t.analysisPlans.id, t.planVersions.planId))
    .where(eq(t.planVersions.id, input.versionId))
    .limit(1);
  if (!row) throw new Error(`No plan version ${input.versionId} to notify about.`);
  const models = await tx
    .select({ id: t.plannedModels.id })
    .from(t.plannedModels)
    .where(eq(t.plannedModels.planVersionId, row.v.id));
  const cannotApprove = new Set([
    input.submittedBy,
    row.v.authorId,
    ...(JSON.parse(row.v.editorIdsJson) as string[]),
  ]);
  const recipients = (await members(tx, input.studyId, ["biostatistician"])).filter(
    (p) => !cannotApprove.has(p.id),
  );
  const submitter = await nameOf(tx, input.submittedBy);
  const linkPath = notificationPaths.planVersion(input.studyId, row.v.id);
  await queueMail(tx, {
    kind: "plan_awaits_approval",
    studyId: input.studyId,
    linkPath,
    recipients,
    message: composeMessage({
      subject: `${study.code}: plan version ${row.v.version} awaits approval`,
      heading: `Version ${row.v.version} of “${row.v.title}” awaits approval`,
      paragraphs: [
        `${submitter} submitted this version of the analysis plan for approval.`,
        "A biostatistician who neither wrote nor edited the version approves it or returns it with a note (two-person rule). Approval freezes the version.",
      ],
      facts: [
        studyFact(study),
        ["Plan", `${row.plan.name}, version ${row.v.version}`],
        [
          "SAP",
          [row.v.sapName, row.v.sapVersion && `version ${row.v.sapVersion}`, row.v.sapDate]
            .filter(Boolean)
            .join(", ") || "not named",
        ],
        ["Planned models", String(models.length)],
        ["Submitted by", submitter],
      ],
      link: { url: appLink(linkPath), label: "Open the plan version" },
      reason: `You receive this as a biostatistician on ${study.code} who may approve this version.`,
    }),
  });
}

/**
 * The last open finding of a primary rerun was assessed: tell the study's biostatisticians who
 * may sign it (neither its starter nor any assessor). Call only on that transition.
 */
export async function notifyRerunAwaitsSignOff(
  tx: DbOrTx,
  input: { studyId: string; rerunId: string; subjectIds?: string },
): Promise<void> {
  const study = await studyOf(tx, input.studyId);
  const [row] = await tx
    .select({ r: rerunColumns, m: t.plannedModels, v: t.planVersions })
    .from(t.reruns)
    .innerJoin(t.plannedModels, eq(t.plannedModels.id, t.reruns.plannedModelId))
    .innerJoin(t.planVersions, eq(t.planVersions.id, t.reruns.planVersionId))
    .where(eq(t.reruns.id, input.rerunId))
    .limit(1);
  if (!row) throw new Error(`No rerun ${input.rerunId} to notify about.`);
  const assessed = await tx
    .select({ by: t.deviations.recordedBy })
    .from(t.deviations)
    .where(and(eq(t.deviations.rerunId, row.r.id)));
  const findingCount = (
    await tx.select({ id: t.findings.id }).from(t.findings).where(eq(t.findings.rerunId, row.r.id))
  ).length;
  const cannotSign = new Set([row.r.startedBy, ...assessed.map((a) => a.by)]);
  const recipients = (await members(tx, input.studyId, ["biostatistician"])).filter(
    (p) => !cannotSign.has(p.id),
  );
  const linkPath = notificationPaths.rerun(input.studyId, row.r.id);
  await queueMail(tx, {
    kind: "rerun_awaits_signoff",
    studyId: input.studyId,
    linkPath,
    recipients,
    message: await checkedForSubjects(
      composeMessage({
        subject: `${study.code}: rerun of “${row.m.title}” awaits sign-off`,
        heading: `A rerun of “${row.m.title}” awaits sign-off`,
        paragraphs: [
          `Every finding of this primary rerun has an assessment (${plural(findingCount, "finding")}).`,
          "A biostatistician who neither started the rerun nor assessed its findings signs it; the signature publishes it to the study's sponsor readers.",
        ],
        facts: [
          studyFact(study),
          ["Planned model", row.m.title],
          ["Plan version", String(row.v.version)],
          ["Findings assessed", String(findingCount)],
          ["Started by", await nameOf(tx, row.r.startedBy)],
        ],
        link: { url: appLink(linkPath), label: "Open the rerun" },
        reason: `You receive this as a biostatistician on ${study.code} who may sign this rerun.`,
      }),
      row.r,
      input.subjectIds,
    ),
  });
}

/** A rerun was signed and published: tell the study's sponsor readers. */
export async function notifyReportPublished(
  tx: DbOrTx,
  input: { studyId: string; rerunId: string; subjectIds?: string },
): Promise<void> {
  const study = await studyOf(tx, input.studyId);
  const [row] = await tx
    .select({ r: rerunColumns, m: t.plannedModels, v: t.planVersions })
    .from(t.reruns)
    .innerJoin(t.plannedModels, eq(t.plannedModels.id, t.reruns.plannedModelId))
    .innerJoin(t.planVersions, eq(t.planVersions.id, t.reruns.planVersionId))
    .where(eq(t.reruns.id, input.rerunId))
    .limit(1);
  if (!row) throw new Error(`No rerun ${input.rerunId} to notify about.`);
  const [signature] = await tx.select().from(t.signatures).where(eq(t.signatures.rerunId, row.r.id)).limit(1);
  const linkPath = notificationPaths.report(input.studyId, row.r.id);
  await queueMail(tx, {
    kind: "report_published",
    studyId: input.studyId,
    linkPath,
    recipients: await sponsorReaders(tx, input.studyId),
    message: await checkedForSubjects(
      composeMessage({
        subject: `${study.code}: a signed report is published`,
        heading: `The report of “${row.m.title}” is published`,
        paragraphs: [
          "A second biostatistician signed this rerun, which publishes its report: the results, the check outcomes, the deviations with their assessments and the sensitivity comparison.",
        ],
        facts: [
          studyFact(study),
          ["Planned model", row.m.title],
          ["Plan version", String(row.v.version)],
          [
            "Signed by",
            signature ? `${signature.signerName} (${signature.meaning.toLowerCase()})` : "not recorded",
          ],
          ["Signed", row.r.signedAt ? utc(row.r.signedAt) : "not recorded"],
        ],
        link: { url: appLink(linkPath), label: "Read the report" },
        reason: `You receive this as a sponsor reader of ${study.code}.`,
      }),
      row.r,
    ),
  });
}

/**
 * A Word appendix was exported: tell the study's biostatisticians and medical writers. Call in
 * the transaction that stores the appendix row.
 */
export async function notifyAppendixExported(
  tx: DbOrTx,
  input: { studyId: string; appendixId: string; rerunIds: string[] },
): Promise<void> {
  const study = await studyOf(tx, input.studyId);
  const [appendix] = await tx
    .select()
    .from(t.appendices)
    .where(eq(t.appendices.id, input.appendixId))
    .limit(1);
  if (!appendix) throw new Error(`No appendix ${input.appendixId} to notify about.`);
  const models = input.rerunIds.length
    ? await tx
        .select({ title: t.plannedModels.title })
        .from(t.reruns)
        .innerJoin(t.plannedModels, eq(t.plannedModels.id, t.reruns.plannedModelId))
        .where(inArray(t.reruns.id, input.rerunIds))
    : [];
  const [version] = appendix.planVersionId
    ? await tx
        .select({ version: t.planVersions.version })
        .from(t.planVersions)
        .where(eq(t.planVersions.id, appendix.planVersionId))
        .limit(1)
    : [];
  const exporter = await nameOf(tx, appendix.exportedBy);
  const linkPath = notificationPaths.appendix(input.studyId);
  await queueMail(tx, {
    kind: "appendix_exported",
    studyId: input.studyId,
    linkPath,
    recipients: await members(tx, input.studyId, ["biostatistician", "medical_writer"]),
    message: composeMessage({
      subject: `${study.code}: Word appendix exported`,
      heading: `${exporter} exported the Word appendix of ${study.code}`,
      paragraphs: [
        `The appendix covers ${plural(input.rerunIds.length, "signed rerun")}. It is stored with its SHA-256, so a copy can be checked against it.`,
      ],
      facts: [
        studyFact(study),
        ...(version ? [["Plan version", String(version.version)] as [string, string]] : []),
        ["Planned models", [...new Set(models.map((m) => m.title))].join("; ") || "none"],
        ["SHA-256", appendix.sha256],
        ["Exported", utc(appendix.exportedAt)],
      ],
      link: { url: appLink(linkPath), label: "Open the appendix page" },
      reason: `You receive this as a biostatistician or medical writer on ${study.code}.`,
    }),
  });
}
