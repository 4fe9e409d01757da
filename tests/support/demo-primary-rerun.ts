/**
 * The demo study's primary model (chg ~ arm + base + stratum + region + sex + age on the full
 * analysis set, arm the treatment) fitted to a table of demo columns, as a planned rerun's
 * document with every linear check at its default: the figure tests draw from it.
 */
import type { RerunDocument } from "~/.server/reruns/reruns.server";
import { rerunTable } from "~/.server/reruns/what-if.server";
import { fitLinear } from "~/engine";
import { defaultChecks, evaluateChecks } from "~/engine/checks";

export type DemoColumns = Record<string, string[]>;

export function demoPrimaryRerun(columns: DemoColumns) {
  const partial = {
    population: { column: "fasfl", value: "Y" },
    options: { variant: "planned" },
  } as unknown as RerunDocument;
  const table = rerunTable(partial, { columns, rowNumbers: columns.subjid.map((_, i) => i + 1) });
  const result = fitLinear(
    {
      response: "chg",
      terms: [
        { variable: "arm", reference: "Placebo" },
        { variable: "base" },
        { variable: "stratum" },
        { variable: "region" },
        { variable: "sex" },
        { variable: "age" },
      ],
      id: "subjid",
      treatment: "arm",
    },
    table,
  );
  const doc = { ...partial, result, checks: evaluateChecks(result, defaultChecks(true)) } as RerunDocument;
  return { doc, table, result };
}
