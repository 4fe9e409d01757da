/**
 * The invented scenario behind the demo study. Every name here is made up: the sponsor, the
 * compound, the study code and the symptom score belong to no real company, product or trial.
 * The subject-level rows are produced by `generateDemoDataset` in demo-dataset.ts.
 */

export const DEMO_SPONSOR = "Quillmoor Therapeutics";

/** Invented non-proprietary-style name; sponsor's development code beside it. */
export const DEMO_COMPOUND = { name: "lorvanitide", code: "QMT-4471" } as const;

export const DEMO_STUDY_CODE = "QMT-301";

export const DEMO_STUDY_TITLE =
  "A 12-week, randomised, double-blind, placebo-controlled, parallel-group study of two oral " +
  "doses of lorvanitide in adults with moderate-to-severe chronic pruritus of unknown origin " +
  "(invented demonstration study)";

export const DEMO_INDICATION = "Moderate-to-severe chronic pruritus of unknown origin";

/**
 * The symptom score the primary endpoint is built on: 7-day mean of a daily itch-burden rating,
 * 0 to 100, higher is worse. An invented instrument for the demo.
 */
export const DEMO_SCORE = {
  name: "Itch Burden Score",
  abbreviation: "IBS-D",
  range: [0, 100],
  direction: "higher is worse",
} as const;

export interface DemoArm {
  /** Value written in the `arm` column. */
  label: string;
  code: "PBO" | "LOW" | "HIGH";
  doseMg: number;
}

/** Randomised 1:1:1 within severity stratum; Placebo is the reference arm. */
export const DEMO_ARMS: readonly DemoArm[] = [
  { label: "Placebo", code: "PBO", doseMg: 0 },
  { label: "Lorvanitide 40 mg", code: "LOW", doseMg: 40 },
  { label: "Lorvanitide 120 mg", code: "HIGH", doseMg: 120 },
];

export const DEMO_REFERENCE_ARM = "Placebo";

export const DEMO_STRATA = ["Moderate", "Severe"] as const;

/** Screening score at or above this value puts a subject in the "Severe" stratum. */
export const DEMO_SEVERE_CUTOFF = 65;

export const DEMO_REGIONS = ["North", "Central", "South"] as const;

/** Responder: week-12 score improved by at least this fraction of the baseline score. */
export const DEMO_RESPONDER_FRACTION = 0.3;

export interface DemoColumn {
  name: string;
  label: string;
  type: "string" | "integer" | "decimal";
  unit: string | null;
}

/** Data dictionary of adeff.csv, one entry per column, in file order. */
export const DEMO_DATA_DICTIONARY: readonly DemoColumn[] = [
  { name: "subjid", label: "Pseudonymous subject code", type: "string", unit: null },
  { name: "arm", label: "Randomised arm", type: "string", unit: null },
  {
    name: "stratum",
    label: "Baseline severity stratum (screening score < 65 / >= 65)",
    type: "string",
    unit: null,
  },
  { name: "region", label: "Geographic region", type: "string", unit: null },
  { name: "sex", label: "Sex (F, M)", type: "string", unit: null },
  { name: "age", label: "Age at randomisation (empty: not collected)", type: "integer", unit: "years" },
  { name: "base", label: "Baseline Itch Burden Score", type: "decimal", unit: "points (0-100)" },
  {
    name: "wk12",
    label: "Week-12 Itch Burden Score (empty: no week-12 value)",
    type: "decimal",
    unit: "points (0-100)",
  },
  { name: "chg", label: "Change from baseline at week 12 (wk12 - base)", type: "decimal", unit: "points" },
  { name: "fasfl", label: "Full analysis set flag (Y, N)", type: "string", unit: null },
  {
    name: "resp",
    label: "Responder: week-12 improvement of at least 30% of baseline (1 yes, 0 no)",
    type: "integer",
    unit: null,
  },
  { name: "flares", label: "Number of itch flares during treatment", type: "integer", unit: "flares" },
  { name: "expdays", label: "Time on treatment", type: "integer", unit: "days" },
  {
    name: "logexp",
    label: "Natural log of time on treatment (offset for flare rate)",
    type: "decimal",
    unit: "log(days)",
  },
];
