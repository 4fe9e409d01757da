/**
 * Datasets on the running server: who may see subject-level rows and who may upload, screen
 * and lock (DESIGN.md's table of roles), a real multipart upload with streamed progress, a
 * refused upload that stores nothing, and an upload cut off half-way that leaves nothing.
 */
import { existsSync, readdirSync } from "node:fs";
import http from "node:http";
import path from "node:path";
import { beforeAll, describe, expect, inject, it } from "vitest";
import { sessionCookieFor, studyIdByCode, testDb } from "../support/sessions";

const stack = inject("stack");
const EMAIL = {
  data_manager: "dana.okafor@plumbline.example",
  biostatistician: "priya.lindqvist@plumbline.example",
  medical_writer: "helen.achter@plumbline.example",
  sponsor_reader: "sam.quill@quillmoor.example",
} as const;
type Role = keyof typeof EMAIL;
const cookie: Partial<Record<Role, string>> = {};
let studyId = "";
let versionId = "";

beforeAll(async () => {
  studyId = await studyIdByCode(stack, "QMT-301");
  const rs = await testDb(stack).execute(
    "SELECT v.id FROM dataset_versions v JOIN datasets d ON d.id = v.dataset_id WHERE d.name = 'adeff' AND v.version = 1",
  );
  versionId = String(rs.rows[0].id);
  for (const [role, email] of Object.entries(EMAIL))
    cookie[role as Role] = await sessionCookieFor(stack, email);
});

const base = () => `${stack.appUrl}/studies/${studyId}/datasets`;
const get = (url: string, role: Role) =>
  fetch(url, { headers: { Cookie: cookie[role] ?? "" }, redirect: "manual" });
const upload = (role: Role, name: string, content: string, fileName = "adx.csv") => {
  const form = new FormData();
  form.append("datasetName", name);
  form.append("file", new File([content], fileName, { type: "text/csv" }));
  return fetch(`${base()}/upload`, {
    method: "POST",
    body: form,
    headers: { Cookie: cookie[role] ?? "", Origin: stack.appUrl, Accept: "application/x-ndjson" },
  });
};
const post = (url: string, role: Role, body: Record<string, string>) =>
  fetch(url, {
    method: "POST",
    redirect: "manual",
    headers: {
      Cookie: cookie[role] ?? "",
      Origin: stack.appUrl,
      "Content-Type": "application/x-www-form-urlencoded",
    },
    body: new URLSearchParams(body),
  });
const count = async (sql: string) => Number((await testDb(stack).execute(sql)).rows[0].n);
const tmpFiles = () => {
  const tmp = path.join(stack.dataDir, "datasets", "tmp");
  return existsSync(tmp) ? readdirSync(tmp) : [];
};

describe("subject-level rows", () => {
  it("reach data managers and biostatisticians only", async () => {
    for (const role of ["data_manager", "biostatistician"] as const) {
      const res = await get(`${base()}/${versionId}/rows?offset=0&limit=5&sort=age&desc=1`, role);
      expect(res.status).toBe(200);
      const w = (await res.json()) as { total: number; rows: string[][]; columns: string[] };
      expect(w.total).toBe(450);
      expect(w.rows).toHaveLength(5);
      const age = w.columns.indexOf("age");
      expect(Number(w.rows[0][age])).toBeGreaterThanOrEqual(Number(w.rows[4][age]));
    }
    for (const role of ["medical_writer", "sponsor_reader"] as const) {
      const rows = await get(`${base()}/${versionId}/rows`, role);
      expect(rows.status).toBe(403);
      expect(await rows.text()).not.toContain("QMT301-0001");
      const page = await get(`${base()}/${versionId}`, role);
      expect(page.status).toBe(403);
      expect(await page.text()).not.toContain("QMT301-0001");
    }
  });
});

describe("only data managers upload, screen and lock", () => {
  it("refuses uploads from every other role and stores nothing", async () => {
    const before = await count("SELECT count(*) AS n FROM dataset_versions");
    for (const role of ["biostatistician", "medical_writer", "sponsor_reader"] as const) {
      const res = await upload(role, "adother", "subjid,age\nS1,40\n");
      expect(res.status).toBe(403);
      expect(await res.text()).toMatch(/To upload datasets you need the data manager role/);
    }
    expect(await count("SELECT count(*) AS n FROM dataset_versions")).toBe(before);
  });

  it("refuses screen decisions and locks from a biostatistician", async () => {
    const hit = (
      await testDb(stack).execute({
        sql: "SELECT id FROM identifier_screen_hits WHERE dataset_version_id = ?",
        args: [versionId],
      })
    ).rows[0].id as string;
    const decide = await post(`${base()}/${versionId}`, "biostatistician", {
      intent: "not_identifier",
      hitId: hit,
      rationale: "a pseudonymous code",
    });
    expect(decide.status).toBe(403);
    const lock = await post(`${base()}/${versionId}`, "biostatistician", { intent: "lock" });
    expect(lock.status).toBe(403);
    expect(await lock.text()).toMatch(/To lock a dataset version you need the data manager role/);
    const purge = await post(`${base()}/${versionId}`, "biostatistician", {
      intent: "purge",
      confirm: "yes",
    });
    expect(purge.status).toBe(403);
    expect(await purge.text()).toMatch(/To purge superseded dataset versions you need the data manager role/);
  });
});

describe("uploading over HTTP", () => {
  it("streams progress lines and ends with the stored draft version", async () => {
    const lines = ["usubjid,age,arm"];
    for (let i = 1; i <= 2000; i++) lines.push(`S-${i},${20 + (i % 60)},${i % 2 ? "A" : "B"}`);
    const res = await upload("data_manager", "adhttp", lines.join("\n") + "\n");
    expect(res.status).toBe(200);
    expect(res.headers.get("Content-Type")).toContain("application/x-ndjson");
    const events = (await res.text())
      .trim()
      .split("\n")
      .map(
        (l) =>
          JSON.parse(l) as {
            type: string;
            phase?: string;
            result?: { ok: boolean; version: number; versionId: string };
          },
      );
    expect(events.some((e) => e.type === "progress" && e.phase === "parse")).toBe(true);
    const last = events[events.length - 1];
    expect(last.type).toBe("result");
    expect(last.result).toMatchObject({ ok: true, version: 1 });
    const page = await get(`${base()}/${last.result?.versionId}`, "data_manager");
    expect(page.status).toBe(200);
    const html = await page.text();
    expect(html).toContain("adhttp · version 1");
    expect(html).toContain("Unique identifying number or code");
    // The flagged subject code reaches the preview masked, and sorting by it is not offered.
    const rows = await get(
      `${base()}/${last.result?.versionId}/rows?offset=0&limit=3&sort=usubjid&desc=1`,
      "data_manager",
    );
    const w = (await rows.json()) as { masked: string[]; rows: string[][] };
    expect(w.masked).toEqual(["usubjid"]);
    expect(w.rows.map((r) => r[0])).toEqual(["S-#", "S-#", "S-#"]);
  });

  it("shows a numeric-coded site group as looking categorical on the version page", async () => {
    const lines = ["usubjid,sitegr1,base"];
    for (let i = 1; i <= 40; i++)
      lines.push(
        `01-${[701, 703, 704, 708][i % 4]}-${1000 + i},${[701, 703, 704, 708][i % 4]},${(40 + i * 0.7).toFixed(1)}`,
      );
    const res = await upload("data_manager", "adsite", lines.join("\n") + "\n");
    const last = JSON.parse((await res.text()).trim().split("\n").pop() as string) as {
      result: { ok: boolean; versionId: string };
    };
    expect(last.result.ok).toBe(true);
    const html = await (await get(`${base()}/${last.result.versionId}`, "data_manager")).text();
    expect(html).toContain("Looks categorical: <!-- -->4 distinct whole-number values");
    expect(html).not.toContain("Telephone or fax number");
  });

  it("refuses a ragged file with its message, storing no dataset, version or file", async () => {
    const before = [
      await count("SELECT count(*) AS n FROM datasets"),
      await count("SELECT count(*) AS n FROM dataset_versions"),
    ];
    const res = await upload("data_manager", "adbad", "usubjid,age\nS1,40\nS2\n", "adbad.csv");
    const last = JSON.parse((await res.text()).trim().split("\n").pop() as string) as {
      result: { ok: boolean; problems: string[] };
    };
    expect(last.result).toEqual({
      ok: false,
      problems: [
        "adbad.csv: row 2 has 1 field where the header has 2 columns. Check its quotes and separators.",
      ],
    });
    expect([
      await count("SELECT count(*) AS n FROM datasets"),
      await count("SELECT count(*) AS n FROM dataset_versions"),
    ]).toEqual(before);
    expect(tmpFiles()).toEqual([]);
    expect(
      await count("SELECT count(*) AS n FROM audit_events WHERE action = 'dataset.upload_refused'"),
    ).toBeGreaterThan(0);
  });

  it("leaves nothing behind when the connection is cut half-way through the file", async () => {
    const before = await count("SELECT count(*) AS n FROM dataset_versions");
    const boundary = "----plumbline-test-boundary";
    const head = `--${boundary}\r\nContent-Disposition: form-data; name="datasetName"\r\n\r\nadcut\r\n--${boundary}\r\nContent-Disposition: form-data; name="file"; filename="adcut.csv"\r\nContent-Type: text/csv\r\n\r\nusubjid,age\r\n`;
    const url = new URL(`${base()}/upload`);
    await new Promise<void>((resolve) => {
      const req = http.request({
        host: url.hostname,
        port: url.port,
        path: url.pathname,
        method: "POST",
        headers: {
          Cookie: cookie.data_manager,
          Origin: stack.appUrl,
          "Content-Type": `multipart/form-data; boundary=${boundary}`,
          "Content-Length": String(10_000_000),
        },
      });
      req.on("error", () => resolve());
      req.write(head);
      req.write("S1,40\r\n".repeat(50_000));
      setTimeout(() => {
        req.destroy();
        resolve();
      }, 300);
    });
    // Give the server a moment to notice the broken connection and clean up.
    for (let i = 0; i < 50 && tmpFiles().length > 0; i++) await new Promise((r) => setTimeout(r, 100));
    expect(tmpFiles()).toEqual([]);
    expect(await count("SELECT count(*) AS n FROM dataset_versions")).toBe(before);
    expect(await count("SELECT count(*) AS n FROM datasets WHERE name = 'adcut'")).toBe(0);
  });
});
