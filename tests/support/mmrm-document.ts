/**
 * A rerun document of a repeated-measures (MMRM) model for unit tests of the results page and its
 * figures: the invented three-arm trial tests/fixtures/mmrm-trial.csv fitted by fitRepeatedModel
 * with the reference model of tests/reference/repeated/models/trial-unstructured-reml.json (plus
 * the subject id column), and the five repeated-measures checks of the catalogue as stubs: the
 * influence check flags the subjects whose Cook's distance exceeds 4/m (m subjects), worded as the
 * engine words a flagged subject, the others within plan. (The engine's evaluation of these checks
 * is tested where it is written; here only their shape matters.)
 */
import { readFileSync } from "node:fs";
import { join } from "node:path";
import type { CheckOutcome } from "~/engine/checks";
import type { TableInput } from "~/engine/data";
import { REPEATED_CHECKS } from "~/engine/repeated/repeated-check-catalogue";
import { fitRepeatedModel, type RepeatedResult } from "~/engine/repeated/repeated-model";
import { readCsvText } from "~/engine-io/read-csv";
import { ENGINE_VERSION, RESULTS_CAUTION } from "~/engine/version";
import type { RerunDocument } from "~/.server/reruns/compute-rerun";

const ROOT = join(import.meta.dirname, "..");

export const MMRM_MODEL: Record<string, unknown> & { repeated: Record<string, unknown> } = {
  ...(JSON.parse(
    readFileSync(join(ROOT, "reference/repeated/models/trial-unstructured-reml.json"), "utf8"),
  ) as { repeated: Record<string, unknown> }),
  id: "USUBJID",
};

/**
 * The trial's rows; with `outlier`, that subject's change from baseline is raised by 20 at every
 * visit (an influential subject: no subject of the trial as generated exceeds 4/m).
 */
export function mmrmTable(outlier?: string) {
  const table = readCsvText(readFileSync(join(ROOT, "fixtures/mmrm-trial.csv"), "utf8"));
  if (!outlier) return table;
  const ids = table.columns.USUBJID;
  const chg = table.columns.CHG.map((v, i) => (ids[i] === outlier && v !== "" ? String(Number(v) + 20) : v));
  return { ...table, columns: { ...table.columns, CHG: chg } };
}

/** The influence check as the catalogue states it (k/m, k = 4), flagging subjects by id. */
function influenceCheck(r: RepeatedResult): CheckOutcome {
  const def = REPEATED_CHECKS.find((c) => c.key === "repeated_influence")!;
  const m = r.subjects.length;
  const bound = def.defaultThreshold / m;
  const firstRow = new Map<string, number>();
  r.observations.id.forEach((id, i) => firstRow.has(id) || firstRow.set(id, r.observations.row[i]));
  const flagged = r.subjects
    .filter((s) => s.cooksDistance > bound)
    .sort((a, b) => b.cooksDistance - a.cooksDistance)
    .map((s, k) => ({ rank: k + 1, row: firstRow.get(s.id)!, id: s.id, value: s.cooksDistance }));
  const worst = r.subjects.reduce((a, b) => (b.cooksDistance > a.cooksDistance ? b : a));
  return {
    key: "repeated_influence",
    label: def.label,
    outcome: flagged.length ? "finding" : "within",
    statistic: `largest subject Cook's distance ${worst.cooksDistance.toFixed(4)} (subject ${worst.id})`,
    threshold: `4/m = ${bound.toFixed(4)}`,
    summary: `${flagged.length} subjects above 4/m; the most extreme is subject ${worst.id}.`,
    remedy: def.defaultRemedy,
    figure: def.figure,
    flagged,
    value: worst.cooksDistance,
    numbers: {
      measure: "largest subject Cook's distance",
      statistic: worst.cooksDistance,
      df: null,
      threshold: bound,
      compares: "statistic above",
      p: null,
    },
  };
}

function stubCheck(key: CheckOutcome["key"]): CheckOutcome {
  const def = REPEATED_CHECKS.find((c) => c.key === key)!;
  return {
    key,
    label: def.label,
    outcome: "within",
    statistic: "stub statistic",
    threshold: String(def.defaultThreshold),
    summary: "Within plan (stub).",
    remedy: def.defaultRemedy,
    figure: def.figure,
  };
}

export function mmrmDocument(
  options: { spec?: Record<string, unknown>; outlier?: string; table?: TableInput } = {},
): RerunDocument {
  const result = fitRepeatedModel(options.spec ?? MMRM_MODEL, options.table ?? mmrmTable(options.outlier));
  const checks = REPEATED_CHECKS.map((c) =>
    c.key === "repeated_influence" ? influenceCheck(result) : stubCheck(c.key),
  );
  return {
    engineVersion: ENGINE_VERSION,
    caution: RESULTS_CAUTION,
    datasetSha256: "0".repeat(64),
    planVersionId: "plan-version",
    plannedModel: { key: "MMRM-1", title: "Change from baseline by visit" },
    options: { variant: "planned" },
    description: "Primary analysis as planned",
    rows: { inFile: result.n, outsidePopulation: 0, excludedByOption: 0, missingCells: 0, used: result.n },
    population: [],
    result,
    checks,
  };
}
