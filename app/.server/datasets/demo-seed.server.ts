/**
 * Puts the demo study's analysis datasets in place the way a data manager would: the demo data
 * manager uploads adeff.csv (one row per subject) and advisits.csv (one row per subject and
 * visit, for the repeated-measures analysis), records why the pseudonymous subject code is not
 * an identifier, and locks version 1 of each. Uses the same service functions as the datasets pages.
 */
import { eq } from "drizzle-orm";
import { db, t } from "../db/index.server";
import { actorOf } from "../people.server";
import { demoDatasetCsv } from "../demo/demo-dataset";
import { demoVisitsCsv } from "../demo/demo-visits";
import { lockVersion, recordNotIdentifier } from "./dataset-decisions.server";
import { getVersionDetail } from "./dataset-reads.server";
import { uploadBytes } from "./datasets.server";

export const DEMO_DATA_MANAGER_EMAIL = "dana.okafor@plumbline.example";
export const DEMO_SUBJECT_CODE_RATIONALE =
  "Pseudonymous subject code assigned by the study (site and sequence number); it is not derived from any personal identifier and the key to it stays with the sites.";

/** Uploads, screens and locks adeff.csv. */
export async function seedDemoDataset(studyId: string): Promise<{ versionId: string; sha256: string }> {
  return seedLockedDataset(studyId, "adeff", demoDatasetCsv());
}

/** Uploads, screens and locks advisits.csv, the visit-level data of the same subjects. */
export async function seedDemoVisitsDataset(studyId: string): Promise<{ versionId: string; sha256: string }> {
  return seedLockedDataset(studyId, "advisits", demoVisitsCsv());
}

async function seedLockedDataset(
  studyId: string,
  datasetName: string,
  csv: string,
): Promise<{ versionId: string; sha256: string }> {
  const [dana] = await db.select().from(t.people).where(eq(t.people.email, DEMO_DATA_MANAGER_EMAIL)).limit(1);
  if (!dana)
    throw new Error(
      `The demo data manager ${DEMO_DATA_MANAGER_EMAIL} is not in the database; seed the demo people first.`,
    );
  const actor = actorOf(dana);
  const uploaded = await uploadBytes(actor, {
    studyId,
    datasetName,
    fileName: `${datasetName}.csv`,
    bytes: csv,
  });
  if (!uploaded.ok)
    throw new Error(`The demo dataset ${datasetName}.csv was refused: ${uploaded.problems.join(" ")}`);
  const detail = await getVersionDetail(studyId, uploaded.versionId);
  for (const hit of detail?.hits ?? []) {
    if (hit.rule !== "subject_code")
      throw new Error(
        `The demo dataset ${datasetName}.csv has an unexpected identifier screen hit: ${hit.column} (${hit.ruleLabel}).`,
      );
    const done = await recordNotIdentifier(actor, studyId, hit.id, DEMO_SUBJECT_CODE_RATIONALE);
    if (!done.ok) throw new Error(done.message);
  }
  // The seed acts for the demo data manager when the demo starts, so her lock is signed at that moment.
  const locked = await lockVersion(
    { ...actor, signedInAt: new Date().toISOString() },
    studyId,
    uploaded.versionId,
  );
  if (!locked.ok) throw new Error(locked.message);
  return { versionId: uploaded.versionId, sha256: locked.sha256 };
}
