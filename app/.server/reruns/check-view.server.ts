/**
 * A check and the reproduction check as a results page shows them, shared by the views of every
 * model type: texts and flagged subjects through the viewer's redaction (redaction.server.ts).
 */
import { reproductionAsCheck } from "~/engine/reproduction";
import { CHECK_BY_KEY, type CheckOutcome } from "~/engine/checks";
import { figureOfCheck } from "~/figures/registry";
import type { Redaction } from "../redaction.server";
import type { RerunDocument } from "./reruns.server";

/** A check as a results page shows it: texts and flagged subjects through the viewer's redaction. */
export function checkView(c: CheckOutcome, redact: Redaction) {
  return {
    ...c,
    statistic: redact.text(c.statistic, c.key),
    summary: redact.text(c.summary, c.key),
    remedy: redact.text(c.remedy, c.key),
    flagged: redact.flagged(c),
    flaggedCount: c.flagged?.length ?? 0,
    // the figure's module decides which check it supports; a check not computed has none
    figure: figureOfCheck(c),
    formula: CHECK_BY_KEY.get(c.key)?.formula ?? null,
  };
}

/** The reproduction check as the results page shows it (reproduction-results.tsx); null when the plan gives no published values. */
export function reproductionView(doc: Pick<RerunDocument, "reproduction">) {
  if (!doc.reproduction) return null;
  const check = reproductionAsCheck(doc.reproduction);
  return {
    outcome: doc.reproduction.outcome,
    rule: doc.reproduction.rule,
    label: check.label,
    statistic: check.statistic,
    checkOutcome: check.outcome,
    values: doc.reproduction.values.map(({ published: _published, ...v }) => v),
  };
}
