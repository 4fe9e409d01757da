/**
 * How the engine names model coefficients, terms and strata: the one source of these names for the
 * results page, the appendix, the API and the headless answer.
 *
 * - a level of a factor: `VAR: LEVEL` (for example `arm: High dose`);
 * - an interaction: its parts joined by ` × ` (for example `arm: High dose × base`, or the term
 *   `arm × base`);
 * - the intercept: `Intercept`.
 */

/** The separator between the parts of an interaction. */
export const INTERACTION_JOIN = " × ";

/** The name of the intercept column. */
export const INTERCEPT_NAME = "Intercept";

/** The coefficient (or stratum) of one level of a factor: `arm: High dose`. */
export function levelName(variable: string, level: string): string {
  return `${variable}: ${level}`;
}

/** An interaction of coefficients or of variables: `arm: High dose × base`. */
export function interactionName(parts: readonly string[]): string {
  return parts.join(INTERACTION_JOIN);
}
