/**
 * Invented test and benchmark datasets, generated reproducibly (mulberry32 from a fixed seed):
 * a subject code, an arm, numbers, dates and a few text columns.
 */
import { mulberry32 } from "~/engine/seeded-uniform";

export const WIDE_COLUMNS = [
  "usubjid",
  "arm",
  "sex",
  "region",
  "age",
  "base",
  "wk4",
  "wk8",
  "wk12",
  "chg",
  "resp",
  "flares",
  "expdays",
  "weight",
  "height",
  "bmi",
  "crp",
  "alt",
  "ast",
  "egfr",
  "visitdt",
  "fasfl",
  "saffl",
  "site",
  "comment",
] as const;

/** CSV lines of a subject-level dataset with `rows` rows and the 25 columns above. */
export function* wideCsvLines(rows: number, seed = 20_261_201): Generator<string> {
  const u = mulberry32(seed);
  yield WIDE_COLUMNS.join(",");
  const arms = ["Placebo", "Low dose", "High dose"];
  const regions = ["North", "Central", "South"];
  const comments = [
    "no change to study treatment during the period; diary complete for every week of the treatment period",
    "dose interrupted for two days after a mild rash; restarted at the same dose and completed the period",
    "rescue medication taken in week 6 as allowed by the protocol; diary complete apart from two evenings",
    "visit 4 outside its window by three days; assessment kept in the analysis as the plan allows for it",
  ];
  for (let i = 0; i < rows; i++) {
    const base = 40 + 60 * u();
    const wk12 = base - 20 * u();
    const day = 1 + Math.floor(u() * 28);
    yield [
      `QMT301-SITE${String(1 + (i % 60)).padStart(3, "0")}-${String(i + 1).padStart(7, "0")}`,
      arms[i % 3],
      u() < 0.5 ? "F" : "M",
      regions[Math.floor(u() * 3)],
      String(18 + Math.floor(u() * 67)),
      base.toFixed(14),
      (base - 5 * u()).toFixed(14),
      (base - 10 * u()).toFixed(14),
      wk12.toFixed(14),
      (wk12 - base).toFixed(14),
      u() < 0.3 ? "1" : "0",
      String(Math.floor(u() * 9)),
      String(80 + Math.floor(u() * 11)),
      (50 + 50 * u()).toFixed(14),
      (150 + 40 * u()).toFixed(14),
      (18 + 15 * u()).toFixed(14),
      (10 * u()).toFixed(14),
      (10 + 50 * u()).toFixed(0),
      (10 + 40 * u()).toFixed(0),
      (60 + 60 * u()).toFixed(14),
      `2025-${String(1 + Math.floor(u() * 12)).padStart(2, "0")}-${String(day).padStart(2, "0")}`,
      u() < 0.98 ? "Y" : "N",
      "Y",
      `S${String(1 + Math.floor(u() * 60)).padStart(3, "0")}-${regions[i % 3]}-outpatient-clinic`,
      `${comments[Math.floor(u() * comments.length)]}; ${comments[Math.floor(u() * comments.length)]}`,
    ].join(",");
  }
}
