/**
 * An upload whose work file cannot be written, on the running server: the data manager gets a
 * refusal naming the reason (not a dropped connection), the refusal is in the audit trail,
 * nothing is stored, and the server goes on answering.
 */
import { existsSync, mkdirSync, renameSync, rmSync, writeFileSync } from "node:fs";
import path from "node:path";
import { beforeAll, describe, expect, inject, it } from "vitest";
import { sessionCookieFor, studyIdByCode, testDb } from "../support/sessions";

const stack = inject("stack");
let cookie = "";
let studyId = "";

beforeAll(async () => {
  studyId = await studyIdByCode(stack, "QMT-301");
  cookie = await sessionCookieFor(stack, "dana.okafor@plumbline.example");
});

const count = async (sql: string) => Number((await testDb(stack).execute(sql)).rows[0].n);

describe("an upload the data folder cannot take", () => {
  it("is refused with the reason and audited, and the server keeps answering", async () => {
    const tmp = path.join(stack.dataDir, "datasets", "tmp");
    const aside = `${tmp}.aside`;
    if (existsSync(tmp)) renameSync(tmp, aside);
    mkdirSync(path.dirname(tmp), { recursive: true });
    // A file where the work folder should be (a read-only folder does not stop a server running as root).
    writeFileSync(tmp, "not a folder");
    const refusedBefore = await count(
      "SELECT count(*) AS n FROM audit_events WHERE action = 'dataset.upload_refused'",
    );
    try {
      const form = new FormData();
      form.append("datasetName", "adnospace");
      form.append("file", new File(["usubjid,age\nS1,40\n"], "adnospace.csv", { type: "text/csv" }));
      const res = await fetch(`${stack.appUrl}/studies/${studyId}/datasets/upload`, {
        method: "POST",
        body: form,
        headers: { Cookie: cookie, Origin: stack.appUrl, Accept: "application/x-ndjson" },
      });
      expect(res.status).toBe(507);
      const last = JSON.parse((await res.text()).trim().split("\n").pop() as string) as {
        result: { ok: boolean; problems: string[] };
      };
      expect(last.result.ok).toBe(false);
      expect(last.result.problems[0]).toMatch(
        /^Plumbline could not store the uploaded file: a folder inside the data folder is missing or is not a folder \(E[A-Z]+\)\. Nothing was stored\./,
      );
    } finally {
      rmSync(tmp, { force: true });
      if (existsSync(aside)) renameSync(aside, tmp);
    }
    expect(
      await count("SELECT count(*) AS n FROM audit_events WHERE action = 'dataset.upload_refused'"),
    ).toBe(refusedBefore + 1);
    expect(await count("SELECT count(*) AS n FROM datasets WHERE name = 'adnospace'")).toBe(0);
    expect((await fetch(`${stack.appUrl}/healthz`)).status).toBe(200);
  });
});
