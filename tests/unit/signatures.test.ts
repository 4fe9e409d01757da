/**
 * The one signing rule (app/.server/signatures.server.ts) as the services enforce it, whatever
 * the page did: plan approval and dataset lock need a sign-in at the identity provider within
 * 5 minutes and record meaning, signer's name, time and authentication time (21 CFR Part 11,
 * 11.50 and 11.200, are the source of these components).
 */
import { beforeAll, describe, expect, it } from "vitest";
import { demoPrimaryForm } from "../support/demo-forms";
import { useTempDatabase } from "../support/temp-db";

useTempDatabase();
const { seedDemoStudy } = await import("~/.server/demo/seed.server");
const { db, t } = await import("~/.server/db/index.server");
const plans = await import("~/.server/plans/plans.server");
const { validatePlannedModel, readPlannedModelForm } = await import("~/.server/plans/planned-model");
const { listLockedVersions } = await import("~/.server/datasets/catalog.server");
const { uploadBytes, lockVersion } = await import("~/.server/datasets/datasets.server");
const { recordedSignature, SignatureRefused, FRESH_SIGN_IN_MS } = await import("~/.server/signatures.server");
const { eq } = await import("drizzle-orm");

type Actor = { id: string; name: string };
let studyId = "";
const who: Record<"priya" | "tomas" | "dana", Actor> = {} as never;
const stale = () => new Date(Date.now() - FRESH_SIGN_IN_MS - 1000).toISOString();
const fresh = () => new Date().toISOString();

beforeAll(async () => {
  const seeded = await seedDemoStudy();
  if (!seeded.seeded) throw new Error("seed failed");
  studyId = seeded.studyId;
  for (const [k, email] of [
    ["priya", "priya.lindqvist@plumbline.example"],
    ["tomas", "tomas.berg@plumbline.example"],
    ["dana", "dana.okafor@plumbline.example"],
  ] as const) {
    const [p] = await db.select().from(t.people).where(eq(t.people.email, email));
    who[k] = { id: p.id, name: p.displayName };
  }
});

describe("plan approval", () => {
  it("is refused with a stale sign-in (nothing approved), and records its signature when fresh", async () => {
    const { versionId } = await plans.createPlan(who.priya, studyId, {
      title: "Signed plan",
      sapName: "SAP",
      sapVersion: "1.0",
      sapDate: "2026-10-01",
    });
    const locked = await listLockedVersions(studyId);
    const v = validatePlannedModel(
      readPlannedModelForm(demoPrimaryForm()),
      locked.map((x) => ({ name: x.datasetName, columns: x.columns })),
      [],
    );
    if (!v.ok) throw new Error(JSON.stringify(v.errors));
    await plans.savePlannedModel(who.priya, studyId, versionId, 1, null, v.model);
    await plans.submitForApproval(who.priya, studyId, versionId, 2);
    const refused = plans.approvePlanVersion({ ...who.tomas, signedInAt: stale() }, studyId, versionId);
    await expect(refused).rejects.toBeInstanceOf(SignatureRefused);
    await expect(refused).rejects.toMatchObject({
      reauthenticate: true,
      message: expect.stringMatching(/fresh sign-in/),
    });
    expect((await plans.getPlanVersion(studyId, versionId)).version.status).toBe("awaiting_approval");
    const authenticatedAt = fresh();
    await plans.approvePlanVersion({ ...who.tomas, signedInAt: authenticatedAt }, studyId, versionId);
    const { version } = await plans.getPlanVersion(studyId, versionId);
    expect(version.status).toBe("approved");
    expect(await recordedSignature("plan.approve", versionId)).toEqual({
      meaning: "Approved as the analysis plan to be followed",
      signedBy: "Tomas Berg",
      signedAt: version.approvedAt,
      authenticatedAt,
    });
  });
});

describe("dataset lock", () => {
  it("is refused with a stale sign-in (still a draft), and records its signature when fresh", async () => {
    const up = await uploadBytes(who.dana, {
      studyId,
      datasetName: "adsigned",
      fileName: "adsigned.csv",
      bytes: "arm,score\nA,1.5\nB,2.5\n",
    });
    if (!up.ok) throw new Error(up.problems.join(" "));
    await expect(
      lockVersion({ ...who.dana, signedInAt: stale() }, studyId, up.versionId),
    ).rejects.toMatchObject({ reauthenticate: true });
    const [draft] = await db.select().from(t.datasetVersions).where(eq(t.datasetVersions.id, up.versionId));
    expect(draft.status).toBe("draft");
    const authenticatedAt = fresh();
    const locked = await lockVersion({ ...who.dana, signedInAt: authenticatedAt }, studyId, up.versionId);
    expect(locked.ok).toBe(true);
    const [row] = await db.select().from(t.datasetVersions).where(eq(t.datasetVersions.id, up.versionId));
    expect(await recordedSignature("dataset.lock", up.versionId)).toEqual({
      meaning: "Locked as the data to be analysed",
      signedBy: "Dana Okafor",
      signedAt: row.lockedAt,
      authenticatedAt,
    });
  });
});
