/**
 * The one redaction of subject-level data (app/.server/redaction.server.ts) and the one decision
 * behind it (`seesSubjects`): check texts name flagged subjects by rank, free text withholds
 * identifiers, and an answer that still names a subject is found. The roles that see subjects
 * are DESIGN.md's (data manager and biostatistician), written out here by hand.
 */
import { describe, expect, it } from "vitest";
import { useTempDatabase } from "../support/temp-db";

useTempDatabase();
const { redaction } = await import("~/.server/redaction.server");
const { seesSubjects } = await import("~/.server/permissions.server");
type RerunDocument = import("~/.server/reruns/reruns.server").RerunDocument;

function docWith(ids: string[], flagged: { id: string; row: number; rank: number }[]): RerunDocument {
  return {
    result: { observations: { id: ids, row: ids.map((_, i) => i + 1) } },
    checks: [{ key: "cooks_distance", flagged: flagged.map((f) => ({ ...f, value: 1 })) }],
  } as unknown as RerunDocument;
}

describe("who sees subjects", () => {
  it("only the data manager and the biostatistician (DESIGN.md's roles table)", () => {
    expect(seesSubjects({ role: "data_manager" })).toBe(true);
    expect(seesSubjects({ role: "biostatistician" })).toBe(true);
    expect(seesSubjects({ role: "medical_writer" })).toBe(false);
    expect(seesSubjects({ role: "sponsor_reader" })).toBe(false);
    expect(seesSubjects({ role: null })).toBe(false);
  });
});

describe("subject redaction", () => {
  const doc = docWith(
    ["QMT301-0217", "QMT301-0021", "QMT301-0002"],
    [
      { id: "QMT301-0217", row: 1, rank: 1 },
      { id: "QMT301-0021", row: 2, rank: 2 },
    ],
  );
  const r = redaction(false, [doc]);

  it("names flagged subjects by rank within their check and others as a subject", () => {
    expect(r.text("largest Cook's distance 0.322 (subject QMT301-0217)", "cooks_distance")).toBe(
      "largest Cook's distance 0.322 (the subject ranked 1)",
    );
    expect(
      r.text(
        "2 of 300 subjects exceed the threshold; the most extreme is subject QMT301-0021.",
        "cooks_distance",
      ),
    ).toBe("2 of 300 subjects exceed the threshold; the most extreme is the subject ranked 2.");
    expect(r.text("largest leverage 0.1 (subject QMT301-0002)", "leverage")).toBe(
      "largest leverage 0.1 (a subject)",
    );
    expect(r.text("the most extreme is row 7.", "leverage")).toBe("the most extreme is a subject.");
  });

  it("withholds a subject the engine names in quotes, even one of a failed rerun whose ids were never stored", () => {
    const failed = redaction(false, [null]);
    const reason =
      'subject "LNG-017" (USUBJID) appears in 3 analysed rows, but this model analyses one row per subject: add population conditions on the columns that separate its records, AVISITN (0, 12, 24)';
    expect(failed.text(reason)).toBe(
      "a subject (USUBJID) appears in 3 analysed rows, but this model analyses one row per subject: add population conditions on the columns that separate its records, AVISITN (0, 12, 24)",
    );
    expect(redaction(true, [null]).text(reason)).toBe(reason);
  });

  it("drops the naming clauses for the appendix's count-only wording", () => {
    expect(r.countOnly("largest Cook's distance 0.322 (subject QMT301-0217)")).toBe(
      "largest Cook's distance 0.322",
    );
    expect(
      r.countOnly("2 of 300 subjects exceed the threshold; the most extreme is subject QMT301-0021."),
    ).toBe("2 of 300 subjects exceed the threshold.");
  });

  it("takes bare identifiers out of free text and finds any that remain, also in subject fields", () => {
    expect(r.text("QMT301-0217 had a data entry query; QMT301-02170 is no subject of this rerun")).toBe(
      "(id withheld) had a data entry query; QMT301-02170 is no subject of this rerun",
    );
    expect(r.leak({ a: ["fine", { b: "see QMT301-0002" }] })).toBe("see QMT301-0002");
    expect(r.leak({ a: "nothing here", n: 217 })).toBeNull();
    const numeric = redaction(false, [docWith(["217", "12"], [])]);
    expect(numeric.leak({ rows: [{ subject: "217", residual: 1 }] })).toBe("217");
    expect(numeric.leak({ text: "p = 0.217 for 12 subjects" })).toBeNull();
    expect(() => r.assertClean({ who: "QMT301-0021" }, "A test answer")).toThrow(/still names a subject/);
  });

  it("shows flagged subjects by rank only, and changes nothing for a viewer who sees subjects", () => {
    const c = doc.checks[0];
    expect(r.flagged(c).map((f) => f.who)).toEqual(["subject ranked 1", "subject ranked 2"]);
    const open = redaction(true, [doc]);
    expect(open.flagged(c).map((f) => f.who)).toEqual(["QMT301-0217", "QMT301-0021"]);
    expect(open.text("subject QMT301-0217")).toBe("subject QMT301-0217");
    expect(open.assertClean({ who: "QMT301-0021" }, "x")).toEqual({ who: "QMT301-0021" });
  });
});
