/** A rerun's population condition with the rows it removed (null where the stored result did not count them). */
export interface PopulationStepView {
  condition: string;
  removed: number | null;
}

/** " (EFFFL in Y: 153 removed; AVISITN in 24: 326 removed)", or "" for every row. */
export function populationNote(steps: readonly PopulationStepView[]): string {
  if (steps.length === 0) return "";
  return ` (${steps.map((s) => (s.removed === null ? s.condition : `${s.condition}: ${s.removed} removed`)).join("; ")})`;
}
