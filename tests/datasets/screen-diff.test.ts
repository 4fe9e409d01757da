/**
 * The identifier screen (HIPAA Safe Harbor categories, 45 CFR 164.514(b)(2)) by column name and
 * by values, the masking of examples, and the change summary between versions by key.
 */
import { describe, expect, it } from "vitest";
import { summariseChanges } from "~/.server/datasets/diff";
import { maskValue, sasNumberToIso, screenColumns } from "~/.server/datasets/screen";

const col = (
  name: string,
  cells: string[],
  type: "text" | "number" | "date" = "text",
  more: { label?: string; format?: string } = {},
) => ({ name, type, cells, ...more });
const rulesOf = (cols: ReturnType<typeof col>[]) =>
  screenColumns(cols).map((h) => `${h.column}:${h.rule}:${h.basis}`);

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
    const notes = [
      "",
      "no issues",
      "call Mrs Jones",
      "moved to 12 Harbour Street",
      "mail j.doe@example.org",
      "SSN 123-45-6789",
      "MRN 0045821",
      "from 192.168.10.4",
      "see https://clinic.example/p/42",
    ];
    const hits = screenColumns([col("comment", notes)]);
    expect(hits.map((h) => `${h.rule}:${h.matches}`)).toEqual([
      "name:1",
      "address:1",
      "email:1",
      "national_id:1",
      "record_number:1",
      "ip_address:1",
      "url:1",
    ]);
    expect(hits.find((h) => h.rule === "email")?.maskedExamples).toEqual(["m••• j.d••@e••••••.o••"]);
  });

  it("flags full dates tied to a person in a date column, but not numbers or codes", () => {
    expect(rulesOf([col("randdt", ["2025-01-02", "2025-02-03"], "date")])).toEqual(["randdt:date:values"]);
    expect(
      rulesOf([
        col("age", ["40", "55"], "number"),
        col("arm", ["Placebo", "High dose"]),
        col("visit", ["Week 12"]),
      ]),
    ).toEqual([]);
  });

  // CDISC's pilot study codes subjects as study-site-subject (01-701-1015); the same shape is in
  // the public example files (ADSL USUBJID). They were flagged as telephone numbers.
  it("does not take standard subject identifiers for telephone numbers", () => {
    const ids = ["01-701-1015", "01-701-1023", "01-703-1086", "01-704-1445", "01-710-1083"];
    expect(
      rulesOf([
        col("USUBJID", ids),
        col("ptid", ids),
        col("SUBJID", ["1015", "1023"]),
        col("SITEID", ["701", "703"]),
      ]),
    ).toEqual(["USUBJID:subject_code:name", "SUBJID:subject_code:name"]);
  });

  it("flags a phone column with varied formatting by its values, when most values are phone numbers", () => {
    const phones = [
      "(555) 010-2030",
      "+1 555 010 4477",
      "555.010.9182",
      "+44 20 7946 0958",
      "020 7946 0011",
      "555-010-3344 ext. 12",
      "",
      "unknown",
    ];
    const hits = screenColumns([col("contact_no", phones)]);
    expect(hits.map((h) => `${h.column}:${h.rule}:${h.basis}:${h.matches}`)).toEqual([
      "contact_no:phone:values:6",
    ]);
    expect(hits[0].maskedExamples).toEqual(["(###) ###-####", "+# ### ### ####", "###.###.####"]);
    // One phone-like value among codes is not a phone column.
    expect(rulesOf([col("remark", ["A1", "B2", "C3", "(555) 010-2030"])])).toEqual([]);
  });

  it("flags ages over 89 in a column that is an age by name or label (Safe Harbor), and no other number", () => {
    const ages = ["45", "91", "", "67", "90", "89"];
    const hits = screenColumns([
      col("AGE", ages, "number"),
      col("V1", ages, "number", { label: "Age at baseline (years)" }),
      col("AGEGR1N", ages, "number"),
      col("WEIGHT", ages, "number", { label: "Weight (kg)" }),
    ]);
    expect(hits.map((h) => `${h.column}:${h.rule}:${h.matches}`)).toEqual([
      "AGE:age_over_89:2",
      "V1:age_over_89:2",
    ]);
    expect(hits[0].maskedExamples).toEqual(["##", "##"]);
    expect(rulesOf([col("AGE", ["40", "89"], "number")])).toEqual([]);
  });

  it("screens SAS date numbers of transport files as dates, by their DATE or DATETIME format", () => {
    // 1960-01-01 is day 0 (SAS); haven::read_xpt gives the same dates for CDISC's ADSL.
    expect(sasNumberToIso("0", "date")).toBe("1960-01-01");
    // TRTSDT (format DATE9) of the first subjects of CDISC's public pilot ADSL transport file, as
    // haven::read_xpt reads them: 01-701-1015, -1023, -1028, -1033.
    expect(["19725", "19210", "19558", "19800"].map((d) => sasNumberToIso(d, "date"))).toEqual([
      "2014-01-02",
      "2012-08-05",
      "2013-07-19",
      "2014-03-18",
    ]);
    expect(
      screenColumns([col("TRTSDT", ["19725"], "number", { format: "DATE9" })]).map((h) => h.rule),
    ).toEqual(["date"]);
    expect(sasNumberToIso("19724", "date")).toBe("2014-01-01"); // R: as.Date(19724, origin = "1960-01-01")
    expect(sasNumberToIso("1704067200", "datetime")).toBe("2013-12-31T00:00:00"); // R: as.POSIXct(1704067200, origin = "1960-01-01", tz = "UTC")
    const hits = screenColumns([
      col("TRTSDT", ["19723", "19730", ""], "number", { format: "DATE9." }),
      col("TRTSDTM", ["1704067200"], "number", { format: "DATETIME20." }),
      col("DOSE", ["19723"], "number", { format: "8.2" }),
    ]);
    expect(hits.map((h) => `${h.column}:${h.rule}:${h.basis}:${h.matches}`)).toEqual([
      "TRTSDT:date:values:2",
      "TRTSDTM:date:values:1",
    ]);
    expect(hits[0].maskedExamples).toEqual(["####-##-##", "####-##-##"]);
  });

  it("masks every digit and all but the first letter of each word", () => {
    expect(maskValue("Jane Doe, 555-123-4567")).toBe("J••• D••, ###-###-####");
    expect(maskValue("1970-02-03")).toBe("####-##-##");
  });
});

describe("change summary", () => {
  const v1 = {
    version: 1,
    names: ["id", "age", "arm"],
    cells: [
      ["S1", "S2", "S3"],
      ["40", "50", "60"],
      ["A", "B", "A"],
    ],
    keyColumns: ["id"],
  };
  it("counts rows added, removed and changed by key, and columns added and removed", () => {
    const v2 = {
      names: ["id", "age", "sex"],
      cells: [
        ["S3", "S2", "S4"],
        ["60", "51", "30"],
        ["F", "M", "F"],
      ],
      keyColumns: ["id"],
    };
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
    const v2 = {
      names: ["code", "age"],
      cells: [
        ["X1", "X2", "X3"],
        ["40", "50", "61"],
      ],
      keyColumns: ["code"],
    };
    const s = summariseChanges(v1, v2);
    expect(s.keyColumns).toEqual([]);
    expect([s.rowsAdded, s.rowsRemoved, s.rowsChanged, s.rowsUnchanged]).toEqual([0, 0, 1, 2]);
  });
});
