/**
 * The reproduction check in the appendix: a row among the checks of the plan, and a table of
 * each published value against the rerun's value rounded as printed, with the rounding rule.
 */
import type { Block } from "~/shared/appendix-content";
import { fmt } from "~/shared/format";
import { reproductionAsCheck, REPRODUCTION_CHECK_LABEL } from "~/engine/reproduction";
import type { RerunDocument } from "../reruns/reruns.server";

const WORD = { reproduced: "Reproduced", not_reproduced: "Not reproduced" } as const;

/** The check's row of the checks table (check, statistic, threshold, outcome); none without published values. */
export function reproductionCheckRows(doc: RerunDocument): string[][] {
  if (!doc.reproduction) return [];
  const c = reproductionAsCheck(doc.reproduction);
  return [
    [
      c.label,
      c.statistic,
      c.threshold,
      `${WORD[doc.reproduction.outcome]}${c.outcome === "finding" ? " (finding)" : ""}`,
    ],
  ];
}

/** The table of published values against the rerun, numbered after the checks table. */
export function reproductionBlocks(
  doc: RerunDocument,
  rerunId: string,
  modelTitle: string,
  nextTable: () => number,
): Block[] {
  if (!doc.reproduction) return [];
  return [
    {
      kind: "table",
      key: `reproduction:${rerunId}`,
      number: nextTable(),
      caption: `Published values against the rerun, ${modelTitle}`,
      columns: [
        { label: "Quantity" },
        { label: "Printed", numeric: true },
        { label: "Rerun value", numeric: true },
        { label: "Rerun, rounded", numeric: true },
        { label: "Outcome" },
      ],
      rows: doc.reproduction.values.map((v) => [
        v.quantity,
        v.printed,
        v.rerunValue === null ? "—" : fmt(v.rerunValue, Math.min(Math.max(v.decimals + 3, 4), 12)),
        v.rerunRounded ?? "—",
        `${WORD[v.outcome]}: ${v.reason}`,
      ]),
      note: doc.reproduction.rule,
    },
  ];
}

/** The label of a finding of the reproduction check in the deviation log. */
export const REPRODUCTION_FINDING_LABEL = REPRODUCTION_CHECK_LABEL;
