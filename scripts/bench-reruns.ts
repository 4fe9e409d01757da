/**
 * `npm run bench:reruns`: how long a rerun takes from queue to stored result, for the demo
 * study's primary model (450 subjects) and for the same model on 10 000 subjects, and how long
 * building each figure's data takes at 10 000. Runs the real services on a temporary SQLite
 * file. Prints figures; asserts nothing.
 */
import os from "node:os";
import { BENCH_DATASETS, buildLargeStudy, useTempDataDir } from "./lib/large-study";

const temp = useTempDataDir();
try {
  const study = await buildLargeStudy();
  const reruns = await import("../app/.server/reruns/reruns.server");

  const results: string[] = [];
  for (const name of BENCH_DATASETS) {
    const times: number[] = [];
    let id = "";
    for (let i = 0; i < 3; i++) {
      const start = performance.now();
      id = await study.rerun(name);
      times.push(performance.now() - start);
    }
    const r = await reruns.getRerun(study.studyId, id);
    results.push(
      `${name.padEnd(9)} n used ${String(r.doc?.rows.used).padStart(6)}   queue to stored result: ${times.map((x) => `${x.toFixed(0)} ms`).join(", ")} (3 runs)   result JSON ${(JSON.stringify(r.doc).length / 1e6).toFixed(2)} MB`,
    );
    if (name === "adeff10k") {
      try {
        if (!r.doc) throw new Error(`the rerun did not complete: ${r.rerun.failureReason}`);
        const { figureData } = await import("../app/figures/registry");
        const { rerunTable } = await import("../app/.server/reruns/what-if.server");
        const { loadLockedTable } = await import("../app/.server/datasets/catalog.server");
        const table = rerunTable(r.doc, (await loadLockedTable(study.datasetVersionIds[name])).table);
        for (const fig of [
          "influence",
          "leverage_residual",
          "qq",
          "residuals_fitted",
          "spread_by_arm",
          "residuals_covariate",
          "partial_residuals",
        ] as const) {
          const s = performance.now();
          const data = figureData(r.doc, fig, { term: "base", withSubjectIds: true, table });
          results.push(
            `  figure data ${fig.padEnd(20)} ${(performance.now() - s).toFixed(1)} ms, ${(JSON.stringify(data).length / 1e6).toFixed(2)} MB`,
          );
        }
      } catch (e) {
        results.push(`  figure data: not measured (${e instanceof Error ? e.message : e})`);
      }
    }
  }
  console.log(
    `Plumbline rerun benchmark (${os.cpus().length} cores, Node ${process.version})\n${results.join("\n")}`,
  );
} finally {
  temp.remove();
}
process.exit(0);
