/**
 * The identifier screen on files nobody here wrote: CDISC's public pilot ADSL as a transport file
 * (.xpt) and as Dataset-JSON, and SDTM DM (tests/fixtures/cdisc, see its README for the source).
 * Their subject identifiers (01-701-1015) were flagged as telephone numbers; their dates
 * (DATE9. numbers in the transport file) are flagged as dates; no age is over 89 (the oldest is 89).
 */
import { readFileSync } from "node:fs";
import path from "node:path";
import { beforeAll, describe, expect, it } from "vitest";
import { useTempDatabase } from "../support/temp-db";

useTempDatabase();
const { db, t } = await import("~/.server/db/index.server");
const svc = await import("~/.server/datasets/datasets.server");

const studyId = "study-cdisc";
const dana = { id: "p-dana", name: "Dana Okafor" };
const fixture = (name: string) =>
  readFileSync(path.join(import.meta.dirname, "..", "fixtures", "cdisc", name));

beforeAll(async () => {
  await db
    .insert(t.people)
    .values([
      { id: dana.id, email: "dana.okafor@plumbline.example", displayName: dana.name, externalId: "dana" },
    ]);
  await db
    .insert(t.studies)
    .values({ id: studyId, code: "CDISC-1", title: "Public examples", sponsor: "Test sponsor" });
});

async function hitsOf(datasetName: string, fileName: string): Promise<string[]> {
  const up = await svc.uploadBytes(dana, { studyId, datasetName, fileName, bytes: fixture(fileName) });
  if (!up.ok) throw new Error(up.problems.join("\n"));
  const detail = await svc.getVersionDetail(studyId, up.versionId);
  return (detail?.hits ?? []).map((h) => `${h.column}:${h.rule}:${h.basis}`).sort();
}

describe("identifier screen on CDISC's public example files", () => {
  it("adsl.xpt: subject identifiers are subject codes, not phone numbers; SAS dates are dates", async () => {
    const hits = await hitsOf("adsl_xpt", "adsl.xpt");
    expect(hits.filter((h) => h.includes(":phone:"))).toEqual([]);
    expect(hits).toContain("USUBJID:subject_code:name");
    expect(hits).toContain("TRTSDT:date:values");
    expect(hits.filter((h) => h.includes("age_over_89"))).toEqual([]);
  });

  it("adsl.json and dm.json: the same, and the birth date by its name", async () => {
    const adsl = await hitsOf("adsl_json", "adsl.json");
    expect(adsl.filter((h) => h.includes(":phone:"))).toEqual([]);
    expect(adsl).toContain("USUBJID:subject_code:name");
    const dm = await hitsOf("dm", "dm.json");
    expect(dm.filter((h) => h.includes(":phone:"))).toEqual([]);
    expect(dm).toContain("BRTHDTC:date:name");
  });
});
