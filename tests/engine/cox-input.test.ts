// Time-to-event input: bad specifications and data get one line naming the column and row;
// rows with a missing cell are left out and counted. Invented data.
import { describe, expect, it } from "vitest";
import { EngineError } from "~/engine";
import { fitCoxModel } from "~/engine/survival/cox-model";
import { parseCoxSpec } from "~/engine/survival/cox-spec";

const base = {
  family: "cox",
  response: "AVAL",
  status: { column: "CNSR", event: [0] },
  terms: [{ variable: "TRTP", reference: "P" }, { variable: "AGE" }],
  treatment: "TRTP",
};

function table(overrides: Partial<Record<string, string[]>> = {}) {
  const columns: Record<string, string[]> = {
    AVAL: ["5", "8", "8", "12", "15", "20", "22", "30", "31", "40", "41", "50"],
    CNSR: ["0", "1", "0", "0", "1", "0", "0", "1", "0", "0", "1", "0"],
    TRTP: ["P", "A", "P", "A", "P", "A", "A", "P", "P", "A", "A", "P"],
    AGE: ["60", "55", "70", "48", "66", "59", "71", "52", "63", "58", "49", "67"],
    S: ["x", "y", "x", "y", "x", "y", "x", "y", "x", "y", "x", "y"],
  };
  return { columns: { ...columns, ...overrides } as Record<string, string[]> };
}

function message(fn: () => unknown): string {
  try {
    fn();
  } catch (err) {
    expect(err).toBeInstanceOf(EngineError);
    return (err as Error).message;
  }
  throw new Error("expected an EngineError");
}

describe("time-to-event specification and data checks", () => {
  it("fills the defaults: Efron ties, the Kaplan–Meier time transform, no strata", () => {
    const spec = parseCoxSpec(base);
    expect(spec.ties).toBe("efron");
    expect(spec.proportionalHazards.transform).toBe("km");
    expect(spec.strata).toEqual([]);
  });

  it("names an unknown ties method and a missing status", () => {
    expect(message(() => parseCoxSpec({ ...base, ties: "exact" }))).toMatch(/at "ties"/);
    expect(message(() => parseCoxSpec({ ...base, status: undefined }))).toMatch(/at "status"/);
  });

  it("names a missing status or strata column", () => {
    expect(message(() => fitCoxModel({ ...base, status: { column: "EVNT", event: [1] } }, table()))).toMatch(
      /column "EVNT" is missing/,
    );
    expect(message(() => fitCoxModel({ ...base, strata: ["SITE"] }, table()))).toMatch(
      /column "SITE" is missing/,
    );
  });

  it("names the row of a negative time and of a non-numeric time", () => {
    const t = table();
    t.columns.AVAL = [...t.columns.AVAL];
    t.columns.AVAL[3] = "-4";
    expect(message(() => fitCoxModel(base, t))).toMatch(/negative time \(-4\) at data row 4/);
    t.columns.AVAL[3] = "four";
    expect(message(() => fitCoxModel(base, t))).toMatch(/"AVAL" is not numeric: data row 4/);
  });

  it("refuses a status column without any event value", () => {
    expect(message(() => fitCoxModel({ ...base, status: { column: "CNSR", event: [9] } }, table()))).toMatch(
      /no events to model/,
    );
  });

  it("refuses a stratum that is also a term", () => {
    expect(
      message(() =>
        fitCoxModel({ ...base, terms: [...base.terms, { variable: "S" }], strata: ["S"] }, table()),
      ),
    ).toMatch(/strata column "S" is also listed as a term/);
  });

  it("names aliased columns", () => {
    const t = table({
      AGE2: ["120", "110", "140", "96", "132", "118", "142", "104", "126", "116", "98", "134"],
    });
    expect(message(() => fitCoxModel({ ...base, terms: [...base.terms, { variable: "AGE2" }] }, t))).toMatch(
      /aliased: "AGE2"/,
    );
  });

  it("leaves out rows with a missing status or stratum and counts them", () => {
    const t = table();
    t.columns.CNSR = [...t.columns.CNSR];
    t.columns.CNSR[2] = "";
    t.columns.S = [...t.columns.S];
    t.columns.S[5] = "NA";
    const r = fitCoxModel({ ...base, strata: ["S"] }, t);
    expect(r.n).toBe(10);
    expect(r.excludedRows).toEqual([3, 6]);
    expect(r.caution).toMatch(/do not replace/);
  });

  it("reads event values written as text or numbers alike", () => {
    const a = fitCoxModel({ ...base, status: { column: "CNSR", event: ["0"] } }, table());
    const b = fitCoxModel(
      base,
      table({ CNSR: ["0.0", "1", "0", "0", "1", "0", "0", "1", "0", "0", "1", "0"] }),
    );
    expect(a.fit.events).toBe(8);
    expect(b.fit.events).toBe(8);
    expect(b.coefficients[0].estimate).toBeCloseTo(a.coefficients[0].estimate, 12);
  });

  it("names the row of an event at time 0 when the plan asks for the log time transform", () => {
    const t = table({ AVAL: ["0", "8", "8", "12", "15", "20", "22", "30", "31", "40", "41", "50"] });
    expect(message(() => fitCoxModel({ ...base, proportionalHazards: { transform: "log" } }, t))).toMatch(
      /data row 1 has an event at time 0/,
    );
    expect(fitCoxModel(base, t).fit.events).toBe(8);
  });

  it("gives the same answer text for the same inputs", async () => {
    const { coxCliAnswer } = await import("~/engine/survival/cox-result");
    const spec = { ...base, strata: ["S"] };
    expect(coxCliAnswer(spec, table())).toBe(coxCliAnswer(spec, table()));
  });
});
