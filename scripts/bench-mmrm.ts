/**
 * Benchmark line for the repeated-measures (MMRM) engine (called by bench-engine.ts): one REML
 * fit with an unstructured covariance of 6 visits, Satterthwaite df, visit means and contrasts,
 * the overall and treatment-by-visit tests, normalized residuals and per-subject influence, on
 * invented data (2 000 subjects, 3 arms, baseline, about 15% dropping out early). When Rscript is
 * available the same data go through R's nlme::gls (corSymm + varIdent, REML) in the same run.
 */
import { spawnSync } from "node:child_process";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { fitRepeatedModel } from "../app/engine/repeated/repeated-model";

const VISITS = 6;

function invented(subjects: number): Record<string, string[]> {
  let s = 20261205;
  const u = () => {
    s = (s * 1103515245 + 12345) % 2147483648;
    return (s + 0.5) / 2147483648;
  };
  const z = () => Math.sqrt(-2 * Math.log(u())) * Math.cos(2 * Math.PI * u());
  const cols: Record<string, string[]> = { USUBJID: [], ARM: [], AVISIT: [], AVISITN: [], BASE: [], CHG: [] };
  const arms = ["Placebo", "Low", "High"];
  for (let i = 0; i < subjects; i++) {
    const arm = arms[i % 3];
    const base = 50 + 6 * z();
    const last = u() < 0.15 ? 1 + Math.floor(u() * (VISITS - 1)) : VISITS;
    let e = 0;
    for (let v = 1; v <= last; v++) {
      e = 0.7 * e + Math.sqrt(1 - 0.49) * z() * (3 + 0.3 * v);
      const effect = (arm === "High" ? -2 : arm === "Low" ? -1 : 0) * (v / VISITS);
      cols.USUBJID.push(`B-${String(i + 1).padStart(5, "0")}`);
      cols.ARM.push(arm);
      cols.AVISIT.push(`Visit ${v}`);
      cols.AVISITN.push(String(v));
      cols.BASE.push(base.toFixed(1));
      cols.CHG.push((-0.2 * v - 0.2 * (base - 50) + effect + e).toFixed(2));
    }
  }
  return cols;
}

const R_SCRIPT = `
suppressPackageStartupMessages(library(nlme))
d <- read.csv(commandArgs(TRUE)[1])
d$ARM <- relevel(factor(d$ARM), "Placebo"); d$AVISIT <- factor(d$AVISIT)
t <- system.time({
  fit <- gls(CHG ~ ARM + AVISIT + BASE + ARM:AVISIT + BASE:AVISIT, data = d,
    correlation = corSymm(form = ~ AVISITN | USUBJID), weights = varIdent(form = ~ 1 | AVISIT), method = "REML")
  r <- residuals(fit, type = "normalized")
})[["elapsed"]]
cat(t, "\\n")
`;

export function benchMmrm(withR: boolean, subjects = 2_000): void {
  const columns = invented(subjects);
  const spec = {
    response: "CHG",
    terms: [
      { variable: "ARM", reference: "Placebo" },
      { variable: "AVISIT" },
      { variable: "BASE" },
      { interaction: ["ARM", "AVISIT"] },
      { interaction: ["BASE", "AVISIT"] },
    ],
    treatment: "ARM",
    repeated: {
      subject: "USUBJID",
      visit: "AVISIT",
      visitOrder: "AVISITN",
      covariance: "unstructured",
      df: "satterthwaite",
    },
  };
  fitRepeatedModel(spec, { columns: invented(60) }); // warm-up: the compiler's one-time cost
  const start = process.hrtime.bigint();
  const result = fitRepeatedModel(spec, { columns });
  const seconds = Number(process.hrtime.bigint() - start) / 1e9;
  let rSeconds: number | null = null;
  if (withR) {
    const dir = mkdtempSync(join(tmpdir(), "plumbline-bench-mmrm-"));
    const csv = join(dir, "mmrm.csv");
    const names = Object.keys(columns);
    writeFileSync(
      csv,
      [names.join(","), ...columns.CHG.map((_, i) => names.map((k) => columns[k][i]).join(","))].join("\n") +
        "\n",
    );
    writeFileSync(join(dir, "mmrm.R"), R_SCRIPT);
    const out = spawnSync("Rscript", [join(dir, "mmrm.R"), csv], { encoding: "utf8" });
    const v = Number(out.stdout.trim().split("\n").pop());
    rSeconds = out.status === 0 && Number.isFinite(v) ? v : null;
  }
  console.log("");
  console.log(
    `MMRM, unstructured ${VISITS} visits, REML, Satterthwaite, every diagnostic: ${subjects.toLocaleString("en")} subjects, ${result.n.toLocaleString("en")} records, ${result.coefficients.length} coefficients, ${result.covariance.iterations} Newton iterations:`,
  );
  console.log(
    `  engine ${seconds.toFixed(2)} s` +
      (rSeconds === null
        ? ""
        : `; R (nlme::gls, normalized residuals) ${rSeconds.toFixed(2)} s; engine/R ${(seconds / rSeconds).toFixed(2)}`),
  );
}

if (process.argv.includes("--mmrm-only")) benchMmrm(!process.argv.includes("--no-r"));
