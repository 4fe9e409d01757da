/**
 * Benchmark line for the Cox proportional hazards engine (called by bench-engine.ts): one fit
 * with every diagnostic (residuals, DFBETA, Schoenfeld, the proportional-hazards test,
 * concordance, Kaplan–Meier per arm and stratum, log-rank) on invented data, n = 100 000 rows,
 * 4 coefficients, 2 strata, whole-day times (ties). When Rscript is available the same data go
 * through R's coxph, residuals (martingale, deviance, dfbeta, scaled Schoenfeld), cox.zph,
 * survfit and survdiff in the same run.
 */
import { spawnSync } from "node:child_process";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { fitCoxModel } from "../app/engine/survival/cox-model";

function invented(n: number): Record<string, string[]> {
  let s = 20261205;
  const u = () => {
    s = (s * 1103515245 + 12345) % 2147483648;
    return (s + 0.5) / 2147483648;
  };
  const cols: Record<string, string[]> = {
    AVAL: [],
    CNSR: [],
    TRTP: [],
    AGE: [],
    BASE: [],
    SCORE: [],
    STRAT1: [],
  };
  for (let i = 0; i < n; i++) {
    const arm = u() < 0.5 ? "Placebo" : "Active";
    const age = 40 + u() * 40;
    const base = u() * 10;
    const score = u() * 3;
    const hazard = 0.01 * Math.exp(-0.3 * (arm === "Active" ? 1 : 0) + 0.02 * (age - 60) + 0.1 * base);
    const t = -Math.log(u()) / hazard;
    const c = u() * 300;
    cols.AVAL.push(String(Math.ceil(Math.min(t, c))));
    cols.CNSR.push(t <= c ? "0" : "1");
    cols.TRTP.push(arm);
    cols.AGE.push(age.toFixed(1));
    cols.BASE.push(base.toFixed(2));
    cols.SCORE.push(score.toFixed(2));
    cols.STRAT1.push(u() < 0.5 ? "LOW" : "HIGH");
  }
  return cols;
}

const R_SCRIPT = `
suppressPackageStartupMessages(library(survival))
d <- read.csv(commandArgs(TRUE)[1])
t <- system.time({
  fit <- coxph(Surv(AVAL, CNSR == 0) ~ relevel(factor(TRTP), "Placebo") + AGE + BASE + SCORE + strata(STRAT1), data = d)
  m <- residuals(fit, "martingale"); dv <- residuals(fit, "deviance"); db <- residuals(fit, "dfbeta"); ss <- residuals(fit, "scaledsch")
  z <- cox.zph(fit)
  s1 <- survfit(Surv(AVAL, CNSR == 0) ~ TRTP, data = d); s2 <- survfit(Surv(AVAL, CNSR == 0) ~ TRTP + STRAT1, data = d)
  lr <- survdiff(Surv(AVAL, CNSR == 0) ~ TRTP + strata(STRAT1), data = d)
})[["elapsed"]]
cat(t, "\\n")
`;

export function benchCox(withR: boolean, n = 100_000): void {
  const columns = invented(n);
  const spec = {
    family: "cox",
    response: "AVAL",
    status: { column: "CNSR", event: [0] },
    terms: [
      { variable: "TRTP", reference: "Placebo" },
      { variable: "AGE" },
      { variable: "BASE" },
      { variable: "SCORE" },
    ],
    treatment: "TRTP",
    strata: ["STRAT1"],
  };
  fitCoxModel(spec, { columns: invented(2_000) }); // warm-up: the compiler's one-time cost
  const start = process.hrtime.bigint();
  const result = fitCoxModel(spec, { columns });
  const seconds = Number(process.hrtime.bigint() - start) / 1e9;
  let rSeconds: number | null = null;
  if (withR) {
    const dir = mkdtempSync(join(tmpdir(), "plumbline-bench-cox-"));
    const csv = join(dir, "cox.csv");
    const names = Object.keys(columns);
    writeFileSync(
      csv,
      [names.join(","), ...columns.AVAL.map((_, i) => names.map((k) => columns[k][i]).join(","))].join("\n") +
        "\n",
    );
    writeFileSync(join(dir, "cox.R"), R_SCRIPT);
    const out = spawnSync("Rscript", [join(dir, "cox.R"), csv], { encoding: "utf8" });
    const v = Number(out.stdout.trim().split("\n").pop());
    rSeconds = out.status === 0 && Number.isFinite(v) ? v : null;
  }
  console.log("");
  console.log(
    `Cox model with every diagnostic, n = ${n.toLocaleString("en")}, ${result.coefficients.length} coefficients, 2 strata, ${result.fit.events.toLocaleString("en")} events:`,
  );
  console.log(
    `  engine ${seconds.toFixed(2)} s` +
      (rSeconds === null
        ? ""
        : `; R (coxph, residuals, cox.zph, survfit, survdiff) ${rSeconds.toFixed(2)} s; engine/R ${(seconds / rSeconds).toFixed(2)}`),
  );
}
