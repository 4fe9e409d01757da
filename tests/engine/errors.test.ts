// Bad input gives an EngineError whose message names the problem (column, row, levels).
import { describe, expect, it } from "vitest";
import { EngineError, fitModel } from "~/engine";
import { readCsvText } from "~/engine-io/read-csv";

const base = [
  { y: "1.5", x: "2", arm: "A", w: "1" },
  { y: "2.5", x: "3", arm: "B", w: "2" },
  { y: "2.9", x: "5", arm: "A", w: "1" },
  { y: "4.1", x: "6", arm: "B", w: "1" },
  { y: "5.2", x: "8", arm: "A", w: "1" },
];

function message(fn: () => unknown): string {
  try {
    fn();
  } catch (err) {
    expect(err).toBeInstanceOf(EngineError);
    return (err as Error).message;
  }
  throw new Error("expected an EngineError");
}

describe("errors that say what is wrong", () => {
  it("missing column", () => {
    expect(message(() => fitModel({ response: "y", terms: [{ variable: "base" }] }, base))).toBe(
      'column "base" is missing from the data',
    );
  });
  it("non-numeric response names the column and first bad row", () => {
    const rows = base.map((r, i) => (i === 2 ? { ...r, y: "high" } : r));
    expect(message(() => fitModel({ response: "y", terms: [{ variable: "x" }] }, rows))).toMatch(
      /response column "y" is not numeric: data row 3 has "high"/,
    );
  });
  it("fewer usable rows than parameters", () => {
    const rows = base.map((r, i) => (i > 1 ? { ...r, x: "NA" } : r));
    expect(
      message(() => fitModel({ response: "y", terms: [{ variable: "x" }, { variable: "arm" }] }, rows)),
    ).toMatch(/2 usable rows for 3 coefficients/);
  });
  it("constant response", () => {
    const rows = base.map((r) => ({ ...r, y: "3" }));
    expect(message(() => fitModel({ response: "y", terms: [{ variable: "x" }] }, rows))).toMatch(
      /response "y" is constant/,
    );
  });
  it("aliased design names the coefficients", () => {
    const rows = base.map((r) => ({ ...r, x2: String(2 * Number(r.x) + 1) }));
    expect(
      message(() => fitModel({ response: "y", terms: [{ variable: "x" }, { variable: "x2" }] }, rows)),
    ).toMatch(/aliased: "x2"/);
  });
  it("reference level not present lists the levels", () => {
    expect(
      message(() => fitModel({ response: "y", terms: [{ variable: "arm", reference: "Placebo" }] }, base)),
    ).toBe('reference level "Placebo" of "arm" is not present in the rows used; levels: A, B');
  });
  it("zero or negative weight names the row", () => {
    const rows = base.map((r, i) => (i === 3 ? { ...r, w: "0" } : r));
    expect(
      message(() => fitModel({ response: "y", terms: [{ variable: "x" }], weights: "w" }, rows)),
    ).toMatch(/zero or negative weight \(0\) at data row 4/);
  });
  it("ragged CSV row and empty file", () => {
    expect(message(() => readCsvText("y,x\n1,2\n3\n"))).toBe("data row 2 has 1 fields but the header has 2");
    expect(message(() => readCsvText(""))).toBe("the data file is empty");
  });
  it("specification errors", () => {
    expect(message(() => fitModel({ response: "y", terms: [{ interaction: ["x", "arm"] }] }, base))).toMatch(
      /not a main term/,
    );
    expect(message(() => fitModel({ terms: [] }, base))).toMatch(
      /model specification is not valid at "response"/,
    );
  });
});

describe("CSV reading (RFC 4180 through csv-parse)", () => {
  it("handles a byte-order mark, quotes, embedded commas and line breaks", () => {
    const t = readCsvText('\uFEFFid,note,y\r\n1,"a, b",2\r\n2,"line\nbreak",3\r\n3,"say ""hi""",4\r\n');
    expect(Object.keys(t.columns)).toEqual(["id", "note", "y"]);
    expect(t.columns.note).toEqual(["a, b", "line\nbreak", 'say "hi"']);
    expect(t.rowNumbers).toEqual([1, 2, 3]);
  });
});

describe("level order", () => {
  it("numeric order when every level is a number, otherwise code-point order", () => {
    const rows = ["10", "9", "100", "9", "10", "100", "10"].map((d, i) => ({
      y: String(i * 1.3 + (i % 2)),
      d,
    }));
    const r = fitModel({ response: "y", terms: [{ variable: "d", categorical: true }] }, rows);
    expect(r.coefficients.map((c) => c.name)).toEqual(["Intercept", "d: 10", "d: 100"]);
    const rows2 = ["b", "B", "a", "b", "B", "a"].map((g, i) => ({ y: String(i + (i % 3)), g }));
    const r2 = fitModel({ response: "y", terms: [{ variable: "g" }] }, rows2);
    expect(r2.coefficients.map((c) => c.name)).toEqual(["Intercept", "g: a", "g: b"]);
  });
});
