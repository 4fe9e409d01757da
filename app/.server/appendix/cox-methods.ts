/** The methods prose of a time-to-event (Cox) model, in plain statistical words. Pure. */
import { interactionName } from "~/engine/coefficient-names";
import type { CoxSpec } from "~/engine/survival/cox-spec";

const TIME_SCALE = {
  km: "the Kaplan–Meier transform of time",
  rank: "the rank of time",
  identity: "time itself",
  log: "log time",
} as const;

export function coxMethodsParagraphs(
  s: CoxSpec,
  named: (col: string) => string,
  list: (items: string[]) => string,
): string[] {
  const main = s.terms.filter(
    (t): t is { variable: string; categorical?: boolean; reference?: string } => "variable" in t,
  );
  const treatment = main.find((t) => t.variable === s.treatment);
  const covariates = main.filter((t) => t.variable !== s.treatment);
  const interactions = s.terms.flatMap((t) => ("interaction" in t ? [interactionName(t.interaction)] : []));
  const out: string[] = [];
  out.push(
    `The endpoint was the time to event ${named(s.response)}, with ${named(s.status.column)} equal to ${list(s.status.event.map((v) => `"${v}"`))} marking an event and every other value a censored time. ` +
      `It was analysed with a Cox proportional hazards model estimated by maximum partial likelihood (${s.ties === "efron" ? "Efron's" : "Breslow's"} method for tied event times)` +
      (s.strata.length
        ? `, stratified by ${list(s.strata.map(named))} (a separate baseline hazard in each stratum)`
        : "") +
      `${s.weights ? `, with case weights from ${s.weights}` : ""}${s.offset ? `, with ${s.offset} entered as an offset` : ""}${s.cluster ? `, with robust standard errors clustered by ${s.cluster}` : ""}. ` +
      "Records with a missing value in the time, the status or any model term were left out (complete-case analysis).",
  );
  const adjusted = covariates.length
    ? ` The model adjusted for ${list(covariates.map((c) => `${named(c.variable)} (${c.categorical ? `categorical${c.reference ? `, reference "${c.reference}"` : ""}` : "continuous"})`))}.`
    : " No covariates were pre-specified.";
  if (treatment) {
    out.push(
      `Treatment was entered as ${named(treatment.variable)}, a categorical factor with ${treatment.reference ? `"${treatment.reference}"` : "its first level"} as the reference arm; each arm's effect is reported as a hazard ratio with a two-sided 95% Wald confidence interval.` +
        adjusted +
        (interactions.length ? ` Interactions pre-specified: ${list(interactions)}.` : ""),
    );
    out.push(
      `Kaplan–Meier estimates with Greenwood 95% intervals (log scale) describe each arm, and the arms were compared by the log-rank test${s.strata.length ? " stratified as the model" : ""}.`,
    );
  } else out.push(`The model's terms were ${list(main.map((c) => named(c.variable)))}.`);
  out.push(
    `Proportional hazards were examined with the Grambsch and Therneau (1994) score test per term and globally, on ${TIME_SCALE[s.proportionalHazards.transform]}, read together with the scaled Schoenfeld residuals; the functional form of continuous covariates with martingale residuals (Therneau, Grambsch and Fleming 1990).`,
  );
  return out;
}
