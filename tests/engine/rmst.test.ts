/**
 * Restricted mean survival time by arm and its difference, against R's survival package:
 * `summary(survfit(Surv(AVAL, CNSR == 0) ~ TRTP), rmean = tau)$table[, c("rmean", "se(rmean)")]`
 * on the invented trial-shaped data (tests/reference/survival/data/trial-breslow-cluster.csv;
 * values written by tests/reference/survival/generate-sensitivity.R, rows complete in the Cox
 * model's columns as there).
 */
import { readFileSync } from "node:fs";
import { describe, expect, it } from "vitest";
import { EngineError } from "~/engine";
import { restrictedMean, restrictedMeanDifference } from "~/engine/survival/rmst";
import { COX_DATA_FILE, coxSensitivityReference } from "../support/cox-dataset";
import { expectClose } from "../reference/compare";

const R = coxSensitivityReference();
const TOL = 1e-6;

function trial() {
  const [head, ...lines] = readFileSync(COX_DATA_FILE, "utf8").trim().split("\n");
  const names = head.split(",").map((h) => h.replaceAll('"', ""));
  const rows = lines.map((l) =>
    Object.fromEntries(l.split(",").map((v, j) => [names[j], v.replaceAll('"', "")])),
  );
  const used = rows.filter((r) =>
    ["AVAL", "CNSR", "TRTP", "AGE", "BASE", "STRAT1", "STRAT2", "USUBJID"].every((c) => r[c] !== ""),
  );
  return {
    time: used.map((r) => Number(r.AVAL)),
    status: used.map((r) => (Number(r.CNSR) === 0 ? 1 : 0)),
    arm: (level: string) => used.flatMap((r, i) => (r.TRTP === level ? [i] : [])),
  };
}

describe("restricted mean survival time", () => {
  const d = trial();

  it("each arm's restricted mean and its SE equal R's survfit rmean", () => {
    for (const ref of R.rmst.arms) {
      const m = restrictedMean(d.arm(ref.level), d.time, d.status, R.rmst.tau);
      expectClose(m.mean, ref.rmean, TOL, `${ref.level} restricted mean to ${R.rmst.tau}`);
      expectClose(m.se, ref.se, TOL, `${ref.level} SE of the restricted mean`);
    }
  });

  it("the difference between arms has SE √(SE₁² + SE₂²), a Wald interval and p", () => {
    const active = R.rmst.arms.find((a) => a.level === "Active")!;
    const placebo = R.rmst.arms.find((a) => a.level === "Placebo")!;
    const diff = restrictedMeanDifference(
      { level: "Active", rows: d.arm("Active") },
      { level: "Placebo", rows: d.arm("Placebo") },
      d.time,
      d.status,
      R.rmst.tau,
    );
    expectClose(diff.difference, active.rmean - placebo.rmean, TOL, "difference in restricted means");
    const se = Math.hypot(active.se, placebo.se);
    expectClose(diff.se, se, TOL, "SE of the difference");
    expectClose(diff.upper - diff.difference, 1.959963984540054 * se, TOL, "half-width of the 95% interval");
    expect(diff.p).toBeGreaterThan(0);
    expect(diff.p).toBeLessThan(0.01);
  });

  it("refuses a horizon that is not a positive number and an empty arm", () => {
    expect(() => restrictedMean(d.arm("Active"), d.time, d.status, 0)).toThrow(EngineError);
    expect(() => restrictedMean([], d.time, d.status, 180)).toThrow(/no subjects/);
  });
});
