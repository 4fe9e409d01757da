/**
 * The methods prose of a repeated-measures model (MMRM), in plain statistical words: the model,
 * REML or ML, the covariance structure of the visits and its fallback order, the degrees-of-freedom
 * method, missing visits under missing at random, the normalized residuals the checks read and
 * the subject influence. Also the structures' names in words, for the methods and the results. Pure.
 */
import { interactionName } from "~/engine/coefficient-names";
import { COVARIANCE_STRUCTURE_WORDS } from "~/engine/repeated/repeated-names";
import type { CovarianceStructureName, RepeatedDf, RepeatedSpec } from "~/engine/repeated/repeated-spec";

/** What each covariance structure assumes, in words (its name: repeated-names.ts). */
const STRUCTURE_ASSUMES: Record<CovarianceStructureName, { assumes: string }> = {
  unstructured: {
    assumes: "a variance for every visit and a covariance for every pair of visits",
  },
  toeplitz: {
    assumes: "one variance, and one correlation for each distance between visits",
  },
  "toeplitz-heterogeneous": {
    assumes: "a variance for every visit, and one correlation for each distance between visits",
  },
  ar1: {
    assumes: "one variance, and a correlation ρ that falls to ρ^k for visits k positions apart",
  },
  "ar1-heterogeneous": {
    assumes: "a variance for every visit, and a correlation ρ^k for visits k positions apart",
  },
  "compound-symmetry": {
    assumes: "one variance and one correlation shared by every pair of visits",
  },
  "compound-symmetry-heterogeneous": {
    assumes: "a variance for every visit and one correlation shared by every pair of visits",
  },
};

export const structureName = (s: CovarianceStructureName): string => COVARIANCE_STRUCTURE_WORDS[s];

/** The degrees-of-freedom method in words, with its source. */
export const DF_WORDS: Record<RepeatedDf, string> = {
  satterthwaite:
    "Satterthwaite's approximation (Satterthwaite 1946), computed from the observed information of the covariance parameters; F tests of several rows take the denominator df of Fai and Cornelius (1996)",
  "kenward-roger":
    "the Kenward–Roger method (Kenward and Roger 1997): the covariance of the coefficients adjusted for the estimation of the covariance parameters, with its approximate df and scaled F tests",
  residual: "the residual degrees of freedom (records analysed less the number of coefficients)",
};

export const METHOD_WORDS = {
  reml: "restricted maximum likelihood (REML, Patterson and Thompson 1971)",
  ml: "maximum likelihood (ML)",
} as const;

export function repeatedMethodsParagraphs(
  s: RepeatedSpec,
  named: (col: string) => string,
  list: (items: string[]) => string,
): string[] {
  const rp = s.repeated;
  const main = s.terms.filter(
    (t): t is { variable: string; categorical?: boolean; reference?: string } => "variable" in t,
  );
  const treatment = s.treatment ? main.find((t) => t.variable === s.treatment) : undefined;
  const covariates = main.filter((t) => t.variable !== s.treatment && t.variable !== rp.visit);
  const interactions = s.terms.flatMap((t) => ("interaction" in t ? [interactionName(t.interaction)] : []));
  const fallback = rp.fallback.filter((f) => f !== rp.covariance);
  const out: string[] = [];
  out.push(
    `The endpoint was ${named(s.response)}, recorded at each visit of ${named(rp.visit)} (${rp.visitOrder ? `visits ordered by ${named(rp.visitOrder)}` : "visits in the order of their levels"}). ` +
      `It was analysed with a mixed model for repeated measures (MMRM): a linear model for the mean at each visit whose errors are correlated within a subject (${named(rp.subject)}) across visits, with no random effects, estimated by ${METHOD_WORDS[rp.method]}${s.intercept === false ? ", without an intercept" : ""}.`,
  );
  out.push(
    `The planned covariance structure of the visits within a subject was ${structureName(rp.covariance)} (${STRUCTURE_ASSUMES[rp.covariance].assumes}). ` +
      (fallback.length
        ? `Should its fit not converge, the plan listed the structures to try in turn: ${list(fallback.map(structureName))}; the first whose fit converged with a non-singular information matrix was used, and the results name the structure used and why the ones before it were not.`
        : "The plan listed no fallback structure: a fit that did not converge would leave the model not estimable."),
  );
  if (treatment) {
    out.push(
      `Treatment was entered as ${named(treatment.variable)}, a categorical factor with ${treatment.reference ? `"${treatment.reference}"` : "its first level"} as the reference arm, and the visit as a categorical factor.` +
        (covariates.length
          ? ` The model adjusted for ${list(covariates.map((c) => `${named(c.variable)} (${c.categorical ? `categorical${c.reference ? `, reference "${c.reference}"` : ""}` : "continuous"})`))}.`
          : " No covariates were pre-specified.") +
        (interactions.length ? ` Interactions pre-specified: ${list(interactions)}.` : ""),
    );
    out.push(
      "Adjusted means of the endpoint per arm and visit were computed from the fitted model with continuous covariates held at their mean over the records analysed. " +
        `${s.contrasts === "pairwise" ? "Every pair of arms was compared" : "Each arm was compared with the reference arm"} at every visit by the difference in adjusted means, with a two-sided 95% confidence interval and a t test; ` +
        `the primary visit was ${rp.primaryVisit ? `"${rp.primaryVisit}"` : "the last visit"}. ` +
        "The treatment effect as a whole was tested by the F test that the treatment differences averaged over the visits (equal weight per visit) are all zero, and the treatment-by-visit interaction by the F test that the differences are the same at every visit.",
    );
  } else out.push(`The model's terms were ${list(main.map((c) => named(c.variable)))}.`);
  out.push(
    `Degrees of freedom for the tests and intervals: ${DF_WORDS[rp.df]}.` +
      (rp.df === "kenward-roger"
        ? " Standard errors are those of the adjusted covariance."
        : " Standard errors are model-based, from the inverse of X'V⁻¹X."),
  );
  out.push(
    "Subjects with missing visits contributed every visit they had, and no value was imputed. " +
      "The likelihood analysis is valid when visits are missing at random (Rubin 1976): whether a visit is missing may depend on the subject's observed values and covariates but not on the values that were not observed. " +
      "Records with a missing value in the endpoint or in any model term were left out.",
  );
  out.push(
    "The residual checks read the normalized residuals: each subject's residuals multiplied by the inverse of the Cholesky factor of the fitted covariance matrix of the visits that subject has, which are close to independent standard normal values when the model and its covariance hold (Fitzmaurice, Laird and Ware 2011). " +
      "The influence of a subject was measured by exact deletion of all of its records with the covariance parameters held at their full-data estimate (not refitted): a Cook's distance of the subject on the coefficients (Christensen, Pearson and Johnson 1992), and the change in each treatment contrast at the primary visit.",
  );
  return out;
}
