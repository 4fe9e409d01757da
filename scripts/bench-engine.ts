/**
 * Benchmark of the linear engine's numerical core (not a timed test).
 *
 *   npm run bench:engine            all sizes
 *   npm run bench:engine -- --quick n = 10 000 only
 *
 * For n = 10 000, 200 000 and 1 000 000 rows with p = 25 columns (and 1 000 000 with p = 50) it
 * times the least-squares fit plus every observation-level diagnostic (leverage, internally and
 * externally studentized residuals, Cook's distance, DFFITS, DFBETAS, partial residuals) and
 * reports the peak resident memory of a fresh process per size. When Rscript is on the PATH it
 * runs the same work in R in the same run (lm, then hat values, Cook's distance, deletion
 * residuals and DFBETAS from one lm.influence) and prints the ratio of the times. Times are the
 * best of three runs up to n = 200 000 (one run above), for both. Above LARGE_DESIGN_CELLS design
 * cells the engine reuses the design's storage for Q (large-data mode). Then one line each for a
 * Cox model (bench-cox.ts) and a repeated-measures model (bench-mmrm.ts: 2 000 subjects × 6
 * visits, unstructured, Satterthwaite, every diagnostic, beside nlme::gls, which takes minutes).
 */
import { execFileSync, spawnSync } from "node:child_process";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { fileURLToPath } from "node:url";
import { fitWithObservationDiagnostics, LARGE_DESIGN_CELLS } from "../app/engine";
import { benchCox } from "./bench-cox";
import { benchMmrm } from "./bench-mmrm";

interface Measurement {
  seconds: number;
  peakMiB: number;
}

/** Deterministic standard normal draws (xorshift32 and Box–Muller). */
function normalStream(seed: number): () => number {
  let s = seed >>> 0 || 1;
  const uniform = () => {
    s ^= s << 13;
    s >>>= 0;
    s ^= s >>> 17;
    s ^= s << 5;
    s >>>= 0;
    return (s + 0.5) / 4294967296;
  };
  return () => Math.sqrt(-2 * Math.log(uniform())) * Math.cos(2 * Math.PI * uniform());
}

function runOne(n: number, p: number, warmUp = true): Measurement {
  // the JavaScript compiler optimizes the kernels on first use; a small run first keeps that
  // one-time cost (about 0.3 s) out of the figure, as it would be in a running server
  if (warmUp) runOne(20_000, p, false);
  const draw = normalStream(20261202 + n + p);
  const x = new Float64Array(n * p);
  x.fill(1, 0, n);
  for (let k = n; k < n * p; k++) x[k] = draw();
  const y = new Float64Array(n);
  for (let j = 0; j < p; j++) for (let i = 0; i < n; i++) y[i] += x[j * n + i] * (j % 5) * 0.1;
  for (let i = 0; i < n; i++) y[i] += draw();
  const terms = Array.from({ length: p - 1 }, (_, j) => [j + 1]);

  const start = process.hrtime.bigint();
  const core = fitWithObservationDiagnostics({ x, n, p, y }, terms);
  if (!core) throw new Error("benchmark design is aliased");
  const diag = core.diagnostics;
  const partial = core.partialResiduals;
  const seconds = Number(process.hrtime.bigint() - start) / 1e9;
  // keep the results alive until measured
  if (diag.dfbetas.length !== p || partial.length !== p - 1) throw new Error("unexpected result size");
  const peakMiB = process.resourceUsage().maxRSS / 1024;
  return { seconds, peakMiB };
}

const R_SCRIPT = `
args <- commandArgs(TRUE); n <- as.integer(args[1]); p <- as.integer(args[2]); reps <- as.integer(args[3])
set.seed(1)
X <- matrix(rnorm(n * (p - 1)), n, p - 1)
y <- drop(X %*% ((seq_len(p - 1) %% 5) * 0.1)) + rnorm(n)
best <- Inf
for (k in seq_len(reps)) {
  gc()
  t <- system.time({
    fit <- lm(y ~ X)
    infl <- lm.influence(fit, do.coef = TRUE)
    h <- infl$hat
    d <- cooks.distance(fit, infl = infl)
    r <- rstudent(fit, infl = infl)
    b <- dfbetas(fit, infl = infl)
  })[["elapsed"]]
  best <- min(best, t)
  rm(fit, infl, h, d, r, b)
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

function runR(script: string, n: number, p: number, reps: number): number | null {
  const out = spawnSync("Rscript", [script, String(n), String(p), String(reps)], { encoding: "utf8", maxBuffer: 1 << 20 });
  if (out.status !== 0) return null;
  const v = Number(out.stdout.trim().split("\n").pop());
  return Number.isFinite(v) ? v : null;
}

function main(): void {
  const args = process.argv.slice(2);
  if (args[0] === "--one") {
    const reps = Number(args[3] ?? 1);
    let best = Infinity;
    for (let r = 0; r < reps; r++) best = Math.min(best, runOne(Number(args[1]), Number(args[2]), r === 0).seconds);
    const m: Measurement = { seconds: best, peakMiB: process.resourceUsage().maxRSS / 1024 };
    process.stdout.write(JSON.stringify(m) + "\n");
    return;
  }
  const sizes: [number, number][] = args.includes("--quick")
    ? [[10_000, 25]]
    : [
        [10_000, 25],
        [200_000, 25],
        [1_000_000, 25],
        [1_000_000, 50],
      ];
  const withR = haveR();
  let rScript = "";
  if (withR) {
    rScript = join(mkdtempSync(join(tmpdir(), "plumbline-bench-")), "bench.R");
    writeFileSync(rScript, R_SCRIPT);
  }
  const self = fileURLToPath(import.meta.url);
  console.log("Plumbline engine benchmark: least-squares fit plus every observation-level diagnostic");
  console.log(withR ? "reference: R (lm + lm.influence) in the same run" : "reference: Rscript not found, engine only");
  console.log("");
  console.log(["n", "p", "engine s", "peak RSS MiB", "R s", "engine/R"].map((h) => h.padStart(14)).join(""));
  for (const [n, p] of sizes) {
    const reps = n <= 200_000 ? 3 : 1;
    const child = spawnSync(process.execPath, [...process.execArgv, self, "--one", String(n), String(p), String(reps)], {
      encoding: "utf8",
      maxBuffer: 1 << 20,
    });
    if (child.status !== 0) {
      console.log(`${String(n).padStart(14)}${String(p).padStart(14)}  engine run failed: ${child.stderr.trim().split("\n").pop()}`);
      continue;
    }
    const m = JSON.parse(child.stdout.trim()) as Measurement;
    const r = withR ? runR(rScript, n, p, reps) : null;
    const cells = [
      String(n),
      String(p),
      m.seconds.toFixed(2),
      m.peakMiB.toFixed(0),
      r === null ? "-" : r.toFixed(2),
      r === null ? "-" : (m.seconds / r).toFixed(2),
    ];
    console.log(cells.map((c) => c.padStart(14)).join(""));
  }
  console.log("");
  console.log(`large-data mode (design storage reused for Q) above ${LARGE_DESIGN_CELLS.toLocaleString("en")} cells n·p`);
  console.log("targets: engine/R at most 0.5 at n = 200 000, p = 25; peak RSS within 1536 MiB at n = 1 000 000, p = 50");
  benchCox(withR);
  benchMmrm(withR);
}

main();
