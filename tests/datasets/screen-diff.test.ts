/**
 * The identifier screen (HIPAA Safe Harbor categories, 45 CFR 164.514(b)(2)) by column name and
 * by values, the masking of examples, and the change summary between versions by key.
 */
import { describe, expect, it } from "vitest";
import { summariseChanges } from "~/.server/datasets/diff";
import { maskValue, screenColumns } from "~/.server/datasets/screen";

const col = (name: string, cells: string[], type: "text" | "number" | "date" = "text") => ({ name, type, cells });
const rulesOf = (cols: ReturnType<typeof col>[]) => screenColumns(cols).map((h) => `${h.column}:${h.rule}:${h.basis}`);

describe("identifier screen", () => {
  it("flags columns by name", () => {
    expect(
      rulesOf([
        col("last_name", ["x"]),
        col("street_address", ["x"]),
        col("dob", ["x"]),
        col("phone", ["x"]),
        col("email", ["x"]),
        col("ssn", ["x"]),
        col("mrn", ["x"]),
        col("ip_address", ["x"]),
        col("website", ["x"]),
        col("usubjid", ["x"]),
      ]),
    ).toEqual([
      "last_name:name:name",
      "street_address:address:name",
      "dob:date:name",
      "phone:phone:name",
      "email:email:name",
      "ssn:national_id:name",
      "mrn:record_number:name",
      "ip_address:ip_address:name",
      "website:url:name",
      "usubjid:subject_code:name",
    ]);
  });

  it("flags identifiers hidden in free text by their values, over the whole column", () => {
    const notes = ["", "no issues", "call Mrs Jones on 020 7946 0958", "moved to 12 Harbour Street", "mail j.doe@example.org", "SSN 123-45-6789", "MRN 0045821", "from 192.168.10.4", "see https://clinic.example/p/42"];
    const hits = screenColumns([col("comment", notes)]);
    expect(hits.map((h) => `${h.rule}:${h.matches}`)).toEqual(["name:1", "address:1", "phone:1", "email:1", "national_id:1", "record_number:1", "ip_address:1", "url:1"]);
    expect(hits.find((h) => h.rule === "email")?.maskedExamples).toEqual(["m••• j.d••@e••••••.o••"]);
  });

  it("flags full dates tied to a person in a date column, but not numbers or codes", () => {
    expect(rulesOf([col("randdt", ["2025-01-02", "2025-02-03"], "date")])).toEqual(["randdt:date:values"]);
    expect(rulesOf([col("age", ["40", "55"], "number"), col("arm", ["Placebo", "High dose"]), col("visit", ["Week 12"])])).toEqual([]);
  });

  it("masks every digit and all but the first letter of each word", () => {
    expect(maskValue("Jane Doe, 555-123-4567")).toBe("J••• D••, ###-###-####");
    expect(maskValue("1970-02-03")).toBe("####-##-##");
  });
});

describe("change summary", () => {
  const v1 = { version: 1, names: ["id", "age", "arm"], cells: [["S1", "S2", "S3"], ["40", "50", "60"], ["A", "B", "A"]], keyColumns: ["id"] };
  it("counts rows added, removed and changed by key, and columns added and removed", () => {
    const v2 = { names: ["id", "age", "sex"], cells: [["S3", "S2", "S4"], ["60", "51", "30"], ["F", "M", "F"]], keyColumns: ["id"] };
    expect(summariseChanges(v1, v2)).toEqual({
      againstVersion: 1,
      keyColumns: ["id"],
      columnsAdded: ["sex"],
      columnsRemoved: ["arm"],
      rowsAdded: 1,
      rowsRemoved: 1,
      rowsChanged: 1,
      rowsUnchanged: 1,
      examples: { added: ["S4"], removed: ["S1"], changed: [{ key: "S2", columns: ["age"] }] },
    });
  });

  it("matches by row position when the versions share no key", () => {
    const v2 = { names: ["code", "age"], cells: [["X1", "X2", "X3"], ["40", "50", "61"]], keyColumns: ["code"] };
    const s = summariseChanges(v1, v2);
    expect(s.keyColumns).toEqual([]);
    expect([s.rowsAdded, s.rowsRemoved, s.rowsChanged, s.rowsUnchanged]).toEqual([0, 0, 1, 2]);
  });
});
