/**
 * Families and links as the trade writes them in a methods section or a results table: the
 * distribution by its name with its link in words ("Normal (identity link)", "Binomial (logit
 * link)", "Negative binomial (log link)"). The specification keeps its short keys ("gaussian",
 * "negative-binomial"); these are the words shown beside the numbers.
 */
import type { Family, Link } from "./model-spec";

const FAMILY_WORDS: Record<Family | "cox", string> = {
  gaussian: "Normal",
  binomial: "Binomial",
  poisson: "Poisson",
  quasipoisson: "Quasi-Poisson",
  "negative-binomial": "Negative binomial",
  cox: "Cox proportional hazards",
};

const LINK_WORDS: Record<Link, string> = {
  identity: "identity",
  log: "log",
  logit: "logit",
  probit: "probit",
  cloglog: "complementary log-log",
  inverse: "inverse",
  sqrt: "square-root",
};

/** The family's name: "Normal", "Quasi-Poisson", "Negative binomial". Unknown keys are returned as given. */
export function familyWords(family: string): string {
  return FAMILY_WORDS[family as Family] ?? family;
}

/** The link's name: "logit", "complementary log-log". Unknown keys are returned as given. */
export function linkWords(link: string): string {
  return LINK_WORDS[link as Link] ?? link;
}

/** Family with its link: "Normal (identity link)", "Poisson (log link)"; a Cox model has no link to name. */
export function familyWithLink(family: string, link: string | null | undefined): string {
  if (family === "cox" || !link) return familyWords(family);
  return `${familyWords(family)} (${linkWords(link)} link)`;
}
