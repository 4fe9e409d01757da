/**
 * Benchmark of the engine on the rerun path (not a timed test): the public `fitModel` on typed
 * columns (Float64Array numbers, text as strings), as a rerun hands it the stored Arrow columns,
 * with every diagnostic and test. Beside it, in the same run, R does the same work on the same
 * numbers: lm, lm.influence, cooks.distance, rstudent, dffits, dfbetas, lmtest::bptest,
 * lmtest::resettest, car::vif, and, for a model with a treatment term, the homogeneity-of-slopes
 * F tests (anova of the nested fits with each arm-by-covariate interaction, and all of them).
 *
 *   npm run bench:engine             every case
 *   npm run bench:engine -- --quick  the 10 000-row case only
 *   npm run bench:engine -- --rerun  the whole-rerun line only
 *   npm run bench:engine -- --case 200000 22 [--treatment]
 *                                    one case beside R (n, covariates), no further lines
 *
 * Cases (invented data, seeded; a three-level arm and normal covariates):
 *   n = 10 000, 200 000 and 1 000 000 with p = 25 (the arm as a factor and 22 covariates),
 *   n = 1 000 000 with p = 50 (the arm and 47 covariates), and
 *   n = 200 000 with the arm as the treatment and 8 covariates (slope tests included).
 * Each engine case runs in a fresh process (its peak RSS is that process's, data included); the
 * data go to R through a binary file of doubles, so both fit the same numbers. Times are the
 * best of three up to 200 000 rows and one run above, for both. The engine also computes what R
 * is not asked for here (normality tests, robust standard errors, adjusted means, partial
 * residuals): the ratio is conservative.
 * Then the whole rerun of a large trial (bench-rerun-compute.ts: computeRerun at 10 000 × 10 with
 * the plan's checks and its planned sensitivity analyses), and one line each for a Cox model (bench-cox.ts) and a repeated-measures model (bench-mmrm.ts:
 * 2 000 subjects × 6 visits, unstructured, Satterthwaite, every diagnostic, beside nlme::gls,
 * which takes minutes).
 */
import { execFileSync, spawnSync } from "node:child_process";
import { mkdtempSync, rmSync, writeFileSync } from "node:fs";
import { loadavg, tmpdir } from "node:os";
import { join } from "node:path";
import { fileURLToPath } from "node:url";
import { fitModel, type ModelSpecInput } from "../app/engine";
import { benchCox } from "./bench-cox";
import { benchMmrm } from "./bench-mmrm";
import { benchWholeRerun } from "./bench-rerun-compute";
import { ARMS, normalStream } from "./lib/normal-stream";

interface Case {
  readonly n: number;
  /** Continuous covariates (the arm adds two coefficients, the intercept one). */
  readonly covariates: number;
  readonly treatment: boolean;
}

interface Measurement {
  seconds: number;
  peakMiB: number;
}

interface Invented {
  /** y, then the arm code (0, 1, 2), then the covariates: each a Float64Array. */
  numbers: Float64Array[];
  columns: Record<string, Float64Array | readonly string[]>;
  spec: ModelSpecInput;
}

function invent(c: Case): Invented {
  const { n, covariates } = c;
  const draw = normalStream(20261205 + n + covariates);
  const arm = new Float64Array(n);
  const armText = new Array<string>(n);
  for (let i = 0; i < n; i++) {
    arm[i] = i % 3;
    armText[i] = ARMS[i % 3];
  }
  const xs = Array.from({ length: covariates }, () => {
    const x = new Float64Array(n);
    for (let i = 0; i < n; i++) x[i] = draw();
    return x;
  });
  const y = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    let v = 0.4 * arm[i] + draw();
    for (let j = 0; j < covariates; j++) v += xs[j][i] * (j % 5) * 0.1;
    y[i] = v;
  }
  const columns: Record<string, Float64Array | readonly string[]> = { y, arm: armText };
  xs.forEach((x, j) => (columns[`x${j + 1}`] = x));
  const spec: ModelSpecInput = {
    response: "y",
    family: "gaussian",
    terms: [{ variable: "arm", reference: "Placebo" }, ...xs.map((_, j) => ({ variable: `x${j + 1}` }))],
    ...(c.treatment ? { treatment: "arm" } : {}),
  };
  return { numbers: [y, arm, ...xs], columns, spec };
}

function timeEngine(c: Case, reps: number): Measurement {
  const data = invent(c);
  // the JavaScript compiler optimizes the kernels on first use; a small fit first keeps that
  // one-time cost out of the figure, as it would be in a running server
  const warm = invent({ ...c, n: 5_000 });
  fitModel(warm.spec, { columns: warm.columns });
  let best = Infinity;
  for (let r = 0; r < reps; r++) {
    const start = process.hrtime.bigint();
    const result = fitModel(data.spec, { columns: data.columns });
    best = Math.min(best, Number(process.hrtime.bigint() - start) / 1e9);
    if (result.n !== c.n) throw new Error("unexpected result size");
  }
  return { seconds: best, peakMiB: process.resourceUsage().maxRSS / 1024 };
}

function writeNumbers(c: Case, file: string): void {
  const { numbers } = invent(c);
  const all = new Float64Array(c.n * numbers.length);
  numbers.forEach((col, j) => all.set(col, j * c.n));
  writeFileSync(file, new Uint8Array(all.buffer));
}

const R_SCRIPT = `
suppressPackageStartupMessages({ library(lmtest); library(car) })
args <- commandArgs(TRUE)
file <- args[1]; n <- as.integer(args[2]); k <- as.integer(args[3]); reps <- as.integer(args[4]); treatment <- args[5] == "1"
con <- file(file, "rb"); v <- readBin(con, "double", n * (k + 2), size = 8, endian = "little"); close(con)
m <- matrix(v, n, k + 2); rm(v)
d <- data.frame(y = m[, 1], arm = factor(c("Placebo", "Low dose", "High dose")[m[, 2] + 1], levels = c("Placebo", "Low dose", "High dose")))
for (j in seq_len(k)) d[[paste0("x", j)]] <- m[, j + 2]
rm(m)
covs <- paste0("x", seq_len(k))
f <- reformulate(c("arm", covs), "y")
best <- Inf
for (r in seq_len(reps)) {
  gc()
  t <- system.time({
    fit <- lm(f, data = d)
    infl <- lm.influence(fit, do.coef = TRUE)
    h <- infl$hat
    cd <- cooks.distance(fit, infl = infl)
    rs <- rstudent(fit, infl = infl)
    df <- dffits(fit, infl = infl)
    db <- dfbetas(fit, infl = infl)
    bp <- bptest(fit)
    rt <- resettest(fit, power = 2:3, type = "fitted")
    vf <- vif(fit)
    if (treatment) {
      slopes <- lapply(covs, function(cv) anova(fit, update(fit, as.formula(paste(". ~ . + arm:", cv)))))
      joint <- anova(fit, update(fit, reformulate(c(".", paste0("arm:", covs)), ".")))
    }
  })[["elapsed"]]
  best <- min(best, t)
  rm(fit, infl, h, cd, rs, df, db, bp, rt, vf)
}
cat(best, "\\n")
`;

function haveR(): boolean {
  try {
    execFileSync("Rscript", ["--version"], { stdio: "ignore" });
    return true;
  } catch {
    return false;
  }
}

function runR(script: string, file: string, c: Case, reps: number): number | null {
  const out = spawnSync(
    "Rscript",
    [script, file, String(c.n), String(c.covariates), String(reps), c.treatment ? "1" : "0"],
    {
      encoding: "utf8",
      maxBuffer: 1 << 20,
    },
  );
  if (out.status !== 0) {
    console.error(out.stderr.trim().split("\n").slice(-3).join("\n"));
    return null;
  }
  const v = Number(out.stdout.trim().split("\n").pop());
  return Number.isFinite(v) ? v : null;
}

function label(c: Case): string {
  const p = 1 + 2 + c.covariates;
  return c.treatment ? `treatment + ${c.covariates} covariates (p = ${p})` : `p = ${p}`;
}

function main(): void {
  const args = process.argv.slice(2);
  if (args[0] === "--one") {
    const c: Case = { n: Number(args[1]), covariates: Number(args[2]), treatment: args[3] === "1" };
    process.stdout.write(JSON.stringify(timeEngine(c, Number(args[4]))) + "\n");
    return;
  }
  if (args[0] === "--rerun") {
    benchWholeRerun();
    return;
  }
  if (args[0] === "--write") {
    writeNumbers({ n: Number(args[1]), covariates: Number(args[2]), treatment: false }, args[3]);
    return;
  }
  const only = args[0] === "--case";
  const cases: Case[] = only
    ? [{ n: Number(args[1]), covariates: Number(args[2]), treatment: args.includes("--treatment") }]
    : args.includes("--quick")
      ? [{ n: 10_000, covariates: 22, treatment: false }]
      : [
          { n: 10_000, covariates: 22, treatment: false },
          { n: 200_000, covariates: 22, treatment: false },
          { n: 1_000_000, covariates: 22, treatment: false },
          { n: 1_000_000, covariates: 47, treatment: false },
          { n: 200_000, covariates: 8, treatment: true },
        ];
  const withR = haveR();
  const dir = mkdtempSync(join(tmpdir(), "plumbline-bench-"));
  const rScript = join(dir, "bench.R");
  writeFileSync(rScript, R_SCRIPT);
  const self = fileURLToPath(import.meta.url);
  const node = (extra: string[]) =>
    spawnSync(process.execPath, [...process.execArgv, "--max-old-space-size=8192", self, ...extra], {
      encoding: "utf8",
      maxBuffer: 1 << 20,
    });
  const load = () =>
    loadavg()
      .map((v) => v.toFixed(2))
      .join(" ");
  console.log(
    "Plumbline engine benchmark: fitModel on typed columns (the rerun path), every diagnostic and test",
  );
  console.log(
    withR
      ? "reference: R in the same run (lm, lm.influence, cooks.distance, rstudent, dffits, dfbetas, bptest, resettest, vif; slope F tests by anova)"
      : "reference: Rscript not found, engine only",
  );
  console.log(`load average at start: ${load()}`);
  console.log("");
  console.log(
    [
      "n".padStart(10),
      "model".padStart(34),
      ...["engine s", "peak RSS MiB", "R s", "engine/R"].map((h) => h.padStart(14)),
    ].join(""),
  );
  for (const c of cases) {
    const reps = c.n <= 200_000 ? 3 : 1;
    const child = node(["--one", String(c.n), String(c.covariates), c.treatment ? "1" : "0", String(reps)]);
    if (child.status !== 0) {
      console.log(
        `${String(c.n).padStart(10)}${label(c).padStart(34)}  engine run failed: ${child.stderr.trim().split("\n").pop()}`,
      );
      continue;
    }
    const m = JSON.parse(child.stdout.trim()) as Measurement;
    let r: number | null = null;
    if (withR) {
      const file = join(dir, "data.bin");
      if (node(["--write", String(c.n), String(c.covariates), file]).status === 0)
        r = runR(rScript, file, c, reps);
      rmSync(file, { force: true });
    }
    const cells = [
      m.seconds.toFixed(2),
      m.peakMiB.toFixed(0),
      r === null ? "-" : r.toFixed(2),
      r === null ? "-" : (m.seconds / r).toFixed(2),
    ];
    console.log(
      [String(c.n).padStart(10), label(c).padStart(34), ...cells.map((x) => x.padStart(14))].join(""),
    );
  }
  rmSync(dir, { recursive: true, force: true });
  console.log("");
  console.log(`load average at end: ${load()}`);
  console.log(
    "targets: engine/R at most 0.5 at n = 200 000 (p = 25, and treatment + 8 covariates); peak RSS within 1536 MiB at n = 1 000 000, p = 50",
  );
  if (only) return;
  benchWholeRerun();
  console.log(`load average: ${load()}`);
  benchCox(withR);
  benchMmrm(withR);
}

main();
