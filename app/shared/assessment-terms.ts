/** The words of an assessment: category, impact on the treatment conclusion, action taken. */
export const CATEGORIES = {
  model_assumption: "Model assumption",
  data: "Data",
  specification: "Specification",
} as const;
export const IMPACTS = {
  none: "None",
  minor: "Minor",
  changes_conclusion: "Changes the conclusion",
} as const;
export const ACTIONS = {
  none: "None",
  planned_sensitivity: "Planned sensitivity analysis",
  remedy_robust: "Remedy: robust errors",
  remedy_weighted: "Remedy: weighted fit",
  remedy_transformation: "Remedy: transformation",
  remedy_exclusion: "Remedy: exclusion",
} as const;
