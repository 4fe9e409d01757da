/**
 * The two fit figures of a binomial rerun, on the demo's responder endpoint
 * (resp ~ arm + base + stratum + region + sex + age, logit link, full analysis set):
 *  - binned residuals (Gelman and Hill 2007, Data Analysis Using Regression and
 *    Multilevel/Hierarchical Models, section 5.6): about √n bins of equal size by fitted
 *    probability, each with its mean fitted value, mean residual y − p̂ and band 2·√(p̄(1 − p̄)/n);
 *  - calibration by tenths of predicted risk with the Hosmer–Lemeshow statistic on g − 2 df
 *    (Hosmer and Lemeshow 1980, Communications in Statistics A10, 1043–1069).
 * The figure data are checked against the same definitions computed in R from R's own
 * glm(..., family = binomial) fit of the demo CSV; the specifications against Vega-Lite's compile().
 */
import { execFileSync, spawnSync } from "node:child_process";
import { describe, expect, it } from "vitest";
import { expectWellFormedFigure, titleOf } from "../support/figure-checks";
import { compile } from "vega-lite";
import { useTempDatabase } from "../support/temp-db";

useTempDatabase();
const { seedDemoStudy } = await import("~/.server/demo/seed.server");
const { demoDatasetCsv } = await import("~/.server/demo/demo-dataset");
const { loadLockedTable, listLockedVersions } = await import("~/.server/datasets/catalog.server");
const { computeRerun } = await import("~/.server/reruns/reruns.server");
const { figureData } = await import("~/figures/registry");
const { FigureUnavailableError } = await import("~/figures/shared/source");
const { rerunTable } = await import("~/.server/reruns/what-if.server");
const { figureSpec, FIGURE_KEYS } = await import("~/figures/registry");
const { INSIDE_BAND, OUTSIDE_BAND } = await import("~/figures/shared/types");
const { defaultChecks } = await import("~/engine/checks");
type BinnedResidualsData = import("~/figures/binned-residuals").BinnedResidualsData;
type CalibrationData = import("~/figures/calibration").CalibrationData;

const seeded = await seedDemoStudy();
if (!seeded.seeded) throw new Error(seeded.reason);
const [version] = await listLockedVersions(seeded.studyId);
const locked = await loadLockedTable(version.versionId);

const COVARIATES = ["base", "stratum", "region", "sex", "age"];
function plannedModel(
  key: string,
  response: string,
  family: "binomial" | "poisson" | "gaussian",
  extra: Record<string, unknown> = {},
) {
  return {
    id: key,
    position: 0,
    key,
    title: key,
    datasetName: "adeff",
    spec: {
      population: [{ column: "fasfl", in: ["Y"] }],
      response,
      family,
      intercept: true,
      id: "subjid",
      treatment: "arm",
      terms: [{ variable: "arm", reference: "Placebo" }, ...COVARIATES.map((variable) => ({ variable }))],
      ...extra,
    },
    checks: defaultChecks(true, family),
    sensitivity: [],
  };
}
const meta = { datasetSha256: locked.sha256, planVersionId: "p" };
const doc = computeRerun(
  plannedModel("responder", "resp", "binomial"),
  locked.table,
  { variant: "planned" },
  meta,
);
const table = rerunTable(doc, locked.table);
const binned = figureData(doc, "binned_residuals", { withSubjectIds: true, table }) as BinnedResidualsData;
const calibration = figureData(doc, "calibration", { withSubjectIds: true, table }) as CalibrationData;

/**
 * R 4.x, stats::glm on the demo CSV with the full analysis set, then the engine's definitions
 * written out in R: order by fitted value, bins = round(√n), bin k (0-based) holding the sorted
 * positions floor(k·n/bins)+1 .. floor((k+1)·n/bins); ten groups alike for Hosmer–Lemeshow.
 * Prints "n", one "bin" line per bin, one "group" line per group and one "hl" line.
 */
const R_SCRIPT = String.raw`
d <- read.csv(file("stdin"), colClasses = "character", na.strings = "")
d <- d[d$fasfl == "Y", ]
for (v in c("resp", "base", "age")) d[[v]] <- as.numeric(d[[v]])
d$arm <- relevel(factor(d$arm), ref = "Placebo")
fit <- glm(resp ~ arm + base + stratum + region + sex + age, family = binomial, data = d,
           control = glm.control(epsilon = 1e-14, maxit = 100))
y <- fit$y; p <- fitted(fit); n <- length(y)
o <- order(p)
cat("n", n, "\n")
bins <- max(1, min(n, round(sqrt(n))))
for (k in 0:(bins - 1)) {
  idx <- o[(floor(k * n / bins) + 1):floor((k + 1) * n / bins)]
  m <- length(idx); pf <- mean(p[idx])
  cat("bin", m, sprintf("%.15g", c(pf, mean(y[idx] - p[idx]), 2 * sqrt(pf * (1 - pf) / m))), "\n")
}
g <- min(10, n); hl <- 0
for (k in 0:(g - 1)) {
  idx <- o[(floor(k * n / g) + 1):floor((k + 1) * n / g)]
  m <- length(idx); obs <- sum(y[idx]); ex <- sum(p[idx])
  hl <- hl + (obs - ex)^2 / (ex * (1 - ex / m))
  cat("group", m, sprintf("%.15g", c(ex / m, obs, ex)), "\n")
}
cat("hl", sprintf("%.15g", c(hl, g - 2, pchisq(hl, g - 2, lower.tail = FALSE))), "\n")
`;

interface FromR {
  n: number;
  bins: { n: number; meanFitted: number; meanResidual: number; bound: number }[];
  groups: { n: number; meanPredicted: number; observed: number; expected: number }[];
  hl: { statistic: number; df: number; p: number };
}

function fromR(): FromR {
  const out = execFileSync("Rscript", ["--vanilla", "-e", R_SCRIPT], {
    input: demoDatasetCsv(),
    encoding: "utf8",
  });
  const lines = out
    .trim()
    .split("\n")
    .map((line) => line.trim().split(/\s+/));
  const nums = (line: string[]) => line.slice(1).map(Number);
  const hl = nums(lines.find((l) => l[0] === "hl")!);
  return {
    n: nums(lines.find((l) => l[0] === "n")!)[0],
    bins: lines
      .filter((l) => l[0] === "bin")
      .map(nums)
      .map(([n, meanFitted, meanResidual, bound]) => ({ n, meanFitted, meanResidual, bound })),
    groups: lines
      .filter((l) => l[0] === "group")
      .map(nums)
      .map(([n, meanPredicted, observed, expected]) => ({ n, meanPredicted, observed, expected })),
    hl: { statistic: hl[0], df: hl[1], p: hl[2] },
  };
}

/**
 * The rows keep six significant digits (app/figures/shared/summaries.ts, round): half a unit in the sixth
 * digit, plus 1e-9 for the two fits' convergence.
 */
function expectSix(actual: number, expected: number, what: string): void {
  const halfUnit = expected === 0 ? 0 : 0.5 * 10 ** (Math.floor(Math.log10(Math.abs(expected))) - 5);
  expect(Math.abs(actual - expected), what).toBeLessThanOrEqual(halfUnit + 1e-9);
}

const hasR = spawnSync("Rscript", ["--version"], { stdio: "ignore" }).status === 0;

describe("fit figures of a binomial rerun", () => {
  it("the responder model is a binomial GLM of the demo's full analysis set", () => {
    expect(doc.result.kind).toBe("glm");
    if (doc.result.kind !== "glm") return;
    expect(doc.result.family).toBe("binomial");
    expect(FIGURE_KEYS).toContain("binned_residuals");
    expect(FIGURE_KEYS).toContain("calibration");
  });

  it.skipIf(!hasR)(
    "binned residuals are R's: same bins by sorted fitted value, mean fitted, mean residual and ±2 SE band",
    () => {
      // Source: R stats::glm(family = binomial) fitted values, binned as Gelman and Hill (2007, section 5.6) describe
      const R = fromR();
      expect(doc.result.n).toBe(R.n);
      expect(binned.rows).toHaveLength(R.bins.length);
      expect(R.bins.length).toBe(Math.round(Math.sqrt(R.n)));
      binned.rows.forEach((row, k) => {
        const r = R.bins[k];
        expect(row.bin).toBe(k + 1);
        expect(row.n, `bin ${k + 1} size`).toBe(r.n);
        expectSix(row.meanFitted, r.meanFitted, `bin ${k + 1} mean fitted`);
        expectSix(row.meanResidual, r.meanResidual, `bin ${k + 1} mean residual`);
        expectSix(row.bound, r.bound, `bin ${k + 1} bound`);
        expect(row.lower).toBe(-row.bound);
        expect(row.status).toBe(Math.abs(r.meanResidual) > r.bound ? OUTSIDE_BAND : INSIDE_BAND);
      });
      // the subtitle counts the bins outside their band as R does
      const outside = R.bins.filter((b) => Math.abs(b.meanResidual) > b.bound).length;
      expect(titleOf(figureSpec(binned)).subtitle.join(" ")).toContain(
        `${outside} of ${R.bins.length} bins lie outside their band`,
      );
    },
  );

  it.skipIf(!hasR)(
    "calibration groups and the Hosmer–Lemeshow statistic are R's, recomputed from the same tenths of predicted risk",
    () => {
      // Source: R stats::glm(family = binomial) fitted values; statistic Σ (O − E)² / (E (1 − E/n)) on g − 2 df, stats::pchisq
      const R = fromR();
      expect(calibration.rows).toHaveLength(10);
      calibration.rows.forEach((row, k) => {
        const r = R.groups[k];
        expect(row.n, `group ${k + 1} size`).toBe(r.n);
        expect(row.observed, `group ${k + 1} events`).toBe(r.observed);
        expectSix(row.meanPredicted, r.meanPredicted, `group ${k + 1} mean predicted`);
        expectSix(row.expected, r.expected, `group ${k + 1} expected events`);
        expectSix(row.observedProportion, r.observed / r.n, `group ${k + 1} observed proportion`);
      });
      expect(calibration.test.df).toBe(R.hl.df);
      expect(calibration.test.statistic!).toBeCloseTo(R.hl.statistic, 6);
      expect(calibration.test.p!).toBeCloseTo(R.hl.p, 6);
      const subtitle = titleOf(figureSpec(calibration)).subtitle.join(" ");
      expect(subtitle).toContain(
        `Hosmer–Lemeshow statistic ${R.hl.statistic.toFixed(2)} on ${R.hl.df} degrees of freedom`,
      );
      expect(subtitle).toContain("little power in small samples");
    },
  );

  for (const d of [binned, calibration]) {
    it(`${d.figure}: the specification compiles (Vega-Lite compile()), says what healthy looks like and has axis titles with units in brackets`, () => {
      expectWellFormedFigure(figureSpec(d, { forPrint: true }));
      // the browser's form too: rows read from the named dataset, width from the frame
      expect(() => compile(figureSpec(d, { width: "container", inlineRows: false }))).not.toThrow();
    });
  }

  it("the binned plot says what healthy looks like in the words of its method", () => {
    expect(titleOf(figureSpec(binned)).subtitle.join(" ")).toMatch(
      /^Healthy: about 95% of bins inside the band, no pattern/,
    );
  });

  it("groups of subjects name no one, whoever looks", () => {
    expect(JSON.stringify([binned, calibration])).not.toContain("QMT301-");
    expect(binned.withSubjectIds).toBe(false);
  });

  it("a linear or count rerun has neither figure, and the refusal says why", () => {
    const linear = computeRerun(
      plannedModel("primary", "chg", "gaussian"),
      locked.table,
      { variant: "planned" },
      meta,
    );
    const counts = computeRerun(
      plannedModel("flares", "flares", "poisson", { offset: "logexp" }),
      locked.table,
      { variant: "planned" },
      meta,
    );
    for (const figure of ["binned_residuals", "calibration"] as const) {
      expect(() => figureData(linear, figure, { withSubjectIds: true })).toThrow(FigureUnavailableError);
      expect(() => figureData(linear, figure, { withSubjectIds: true })).toThrow(
        /binomial models of a 0\/1 response only, and this rerun fits a linear model/,
      );
      expect(() => figureData(counts, figure, { withSubjectIds: true })).toThrow(
        /binomial models of a 0\/1 response only, and this rerun fits a Poisson model/,
      );
    }
  });
});
