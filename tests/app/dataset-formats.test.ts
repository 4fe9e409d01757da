/**
 * Dataset formats and hostile files through the real web upload (multipart over HTTP to the
 * running server): CDISC's transport file adsl.xpt (tests/fixtures/cdisc/, public example) is
 * stored with its labels, dates and key; the key a Dataset-JSON file declares survives an
 * empty key field; a stray quote, deep JSON nesting and an empty file are refused with their
 * messages, audited, and leave nothing behind; reading a column by its values needs a reason
 * and records it in the audit trail.
 */
import { existsSync, readdirSync, readFileSync } from "node:fs";
import path from "node:path";
import { beforeAll, describe, expect, inject, it } from "vitest";
import { sessionCookieFor, studyIdByCode, testDb } from "../support/sessions";

const stack = inject("stack");
const CDISC = path.join(import.meta.dirname, "..", "fixtures", "cdisc");
let cookie = "";
let studyId = "";

beforeAll(async () => {
  studyId = await studyIdByCode(stack, "QMT-301");
  cookie = await sessionCookieFor(stack, "dana.okafor@plumbline.example");
});

const base = () => `${stack.appUrl}/studies/${studyId}/datasets`;
type Result = { ok: true; versionId: string; version: number } | { ok: false; problems: string[] };

async function upload(
  fileName: string,
  content: Buffer | string,
  fields: Record<string, string>,
): Promise<{ status: number; result: Result }> {
  const form = new FormData();
  for (const [k, v] of Object.entries(fields)) form.append(k, v);
  form.append("file", new File([typeof content === "string" ? content : new Uint8Array(content)], fileName));
  const res = await fetch(`${base()}/upload`, {
    method: "POST",
    body: form,
    headers: { Cookie: cookie, Origin: stack.appUrl, Accept: "application/x-ndjson" },
  });
  const text = await res.text();
  const last = JSON.parse(text.trim().split("\n").pop() as string) as { result: Result };
  return { status: res.status, result: last.result };
}
const rows = async (sql: string, args: (string | number)[] = []) =>
  (await testDb(stack).execute({ sql, args })).rows;
const tmpFiles = () => {
  const tmp = path.join(stack.dataDir, "datasets", "tmp");
  return existsSync(tmp) ? readdirSync(tmp) : [];
};
const lastRefusal = async (fileName: string) =>
  (
    await rows(
      "SELECT detail, after_json FROM audit_events WHERE action = 'dataset.upload_refused' AND after_json LIKE ? ORDER BY seq DESC LIMIT 1",
      [`%${fileName}%`],
    )
  )[0];

describe("formats through the web upload", () => {
  it("stores CDISC's adsl.xpt with its labels, ISO dates and key, and shows the labels on the version page", async () => {
    const { result } = await upload("adsl.xpt", readFileSync(path.join(CDISC, "adsl.xpt")), {
      datasetName: "adslxpt",
      keyColumns: "",
    });
    expect(result.ok, JSON.stringify(result)).toBe(true);
    if (!result.ok) return;
    const [v] = await rows(
      "SELECT format, row_count, key_columns_json, columns_json, dataset_label FROM dataset_versions WHERE id = ?",
      [result.versionId],
    );
    expect(v.format).toBe("xpt");
    // The dataset label as R's haven::read_xpt reads it (tests/fixtures/cdisc/xpt-reference/adsl.json).
    expect(v.dataset_label).toBe("Subject-Level Analysis Dataset");
    expect(v.row_count).toBe(254);
    expect(JSON.parse(String(v.key_columns_json))).toEqual(["USUBJID"]);
    const columns = JSON.parse(String(v.columns_json)) as {
      name: string;
      label: string;
      type: string;
      format?: string;
      declaredType?: string;
    }[];
    expect(columns.find((c) => c.name === "TRTSDT")).toMatchObject({
      label: "Date of First Exposure to Treatment",
      type: "date",
      format: "DATE9.",
      declaredType: "Num",
      earliest: "2012-07-09",
    });
    const page = await fetch(`${base()}/${result.versionId}`, { headers: { Cookie: cookie } });
    const html = await page.text();
    expect(html).toContain("Unique Subject Identifier");
    expect(html).toContain("XPORT");
    expect(html).toContain("Subject-Level Analysis Dataset");
  });

  it("keeps the key dm.json declares (STUDYID, USUBJID) when the key field is left empty", async () => {
    const { result } = await upload("dm.json", readFileSync(path.join(CDISC, "dm.json")), {
      datasetName: "dmjson",
      keyColumns: "",
      numericColumns: "",
    });
    expect(result.ok, JSON.stringify(result)).toBe(true);
    if (!result.ok) return;
    const [v] = await rows("SELECT key_columns_json FROM dataset_versions WHERE id = ?", [result.versionId]);
    expect(JSON.parse(String(v.key_columns_json))).toEqual(["STUDYID", "USUBJID"]);
  });

  it("shows the reading notes on the version page: text cells among numbers, decimal commas", async () => {
    const lines = ["usubjid;crp;aval"];
    for (let i = 1; i <= 30; i++) lines.push(`S-${i};${i === 12 ? "ND" : i};${i},25`);
    const { result } = await upload("notes.csv", lines.join("\n") + "\n", { datasetName: "adnotes" });
    expect(result.ok, JSON.stringify(result)).toBe(true);
    if (!result.ok) return;
    const html = (
      await (await fetch(`${base()}/${result.versionId}`, { headers: { Cookie: cookie } })).text()
    ).replaceAll("<!-- -->", "");
    expect(html).toContain("Reading notes");
    expect(html).toContain(
      "notes.csv: column &quot;crp&quot; is mostly numbers, but 1 cell holds text, so it was read as text: row 12 &quot;ND&quot;.",
    );
    expect(html).toContain("Decimal commas read as decimal points: aval.");
  });

  it("reads the NDJSON form of Dataset-JSON v1.1", async () => {
    const { result } = await upload("adsl.ndjson", readFileSync(path.join(CDISC, "adsl.ndjson")), {
      datasetName: "adslnd",
    });
    expect(result.ok, JSON.stringify(result)).toBe(true);
  });
});

describe("hostile files through the web upload", () => {
  it("a stray quote mid-file gets an answer (it hung before), is audited and leaves no work file", async () => {
    const lines = ["usubjid,note,aval", 'S0,ab"c,1'];
    for (let i = 1; i < 60_000; i++) lines.push(`S${i},some ordinary text,${i}`);
    const { result } = await upload("stray.csv", lines.join("\n") + "\n", { datasetName: "adstray" });
    expect(result.ok).toBe(false);
    if (result.ok) return;
    expect(result.problems[0]).toMatch(/^stray\.csv: line 2: .*quote/i);
    expect(tmpFiles()).toEqual([]);
    expect(await lastRefusal("stray.csv")).toBeDefined();
  });

  it("deeply nested Dataset-JSON is a clear refusal with its audit event, not a 500", async () => {
    const deep = '{"rows":' + "[".repeat(100_000) + "]".repeat(100_000) + "}";
    const { status, result } = await upload("deep.json", deep, { datasetName: "addeep" });
    expect(status).toBe(200);
    expect(result).toEqual({
      ok: false,
      problems: [expect.stringMatching(/^deep\.json nests arrays or objects more than 32 levels deep/)],
    });
    const audit = await lastRefusal("deep.json");
    expect(String(audit.detail)).toMatch(/more than 32 levels deep/);
    expect(tmpFiles()).toEqual([]);
  });

  it("an 8.9 MB CSV with 1,000,000 columns is refused within seconds and nothing is stored (it ran the server out of memory)", async () => {
    const names = Array.from({ length: 1_000_000 }, (_, i) => `c${i}`);
    const text = names.join(",") + "\n" + names.map(() => "1").join(",") + "\n";
    const started = performance.now();
    const { result } = await upload("wide.csv", text, { datasetName: "adwide" });
    expect(performance.now() - started).toBeLessThan(10_000);
    expect(result).toEqual({
      ok: false,
      problems: [
        expect.stringMatching(
          /^wide\.csv: the header line is longer than 1,048,576 bytes, the limit\..*DATASET_MAX_HEADER_BYTES\.$/,
        ),
      ],
    });
    expect(await rows("SELECT id FROM datasets WHERE name = 'adwide'")).toHaveLength(0);
    expect(tmpFiles()).toEqual([]);
    // The server is still answering.
    expect((await fetch(`${base()}`, { headers: { Cookie: cookie } })).status).toBe(200);
  });

  it("an empty file is named as empty", async () => {
    const { result } = await upload("empty.csv", "", { datasetName: "adempty" });
    expect(result).toEqual({ ok: false, problems: ["The file empty.csv is empty."] });
  });

  it("reading a column by its values needs a reason, and the reason is in the audit trail", async () => {
    const doc = JSON.parse(readFileSync(path.join(CDISC, "dm.json"), "utf8")) as {
      columns: { name: string; dataType: string }[];
      rows: unknown[][];
    };
    const age = doc.columns.findIndex((c) => c.name === "AGE");
    doc.rows[2][age] = 71.5;
    doc.rows[5][age] = 64.25;
    const bytes = JSON.stringify(doc);
    const refused = await upload("dm-ages.json", bytes, { datasetName: "dmages" });
    expect(refused.result.ok).toBe(false);
    if (!refused.result.ok) {
      expect(refused.result.problems).toEqual([
        `dm-ages.json: 2 cells in column "AGE" declared integer hold decimals; first: row 3 '71.5', row 6 '64.25'. Correct the file, or read this column by its values (upload option, with a reason for the audit trail).`,
      ]);
    }
    const noReason = await upload("dm-ages.json", bytes, { datasetName: "dmages", readByValues: "AGE" });
    expect(noReason.status).toBe(400);
    expect(noReason.result.ok ? "" : noReason.result.problems[0]).toMatch(
      /Say why the columns named under "Read by their values"/,
    );
    const reason = "Ages at consent were derived to the day; the sponsor's export declared them integer.";
    const ok = await upload("dm-ages.json", bytes, {
      datasetName: "dmages",
      readByValues: "AGE",
      readByValuesReason: reason,
    });
    expect(ok.result.ok, JSON.stringify(ok.result)).toBe(true);
    if (!ok.result.ok) return;
    const [event] = await rows(
      "SELECT after_json FROM audit_events WHERE action = 'dataset.upload' AND entity_id = ?",
      [ok.result.versionId],
    );
    expect(JSON.parse(String(event.after_json)).readByValues).toEqual({ columns: ["AGE"], reason });
  });
});
