/**
 * The demo study's visit-level dataset (advisits.csv): the Itch Burden Score at weeks 2, 4, 8 and
 * 12 for every treated subject of adeff.csv, as change from baseline, for the repeated-measures
 * (MMRM) analysis. Generated from the subject-level rows and a fixed seed of its own, so adeff.csv
 * is unchanged and the same bytes come out on every run and machine.
 *
 * Consistent with adeff.csv: the week-12 change of a subject who has one is adeff's `chg`; a subject
 * who stopped treatment early has the visits up to its last day on treatment (`expdays`), missing
 * the later ones (dropout); subjects never treated have no visit records. The earlier visits follow
 * the subject's course toward week 12 with serially correlated noise, so the visits' correlation
 * falls with their distance (an unstructured covariance fits; AR(1) is close). The planted subject
 * of adeff.csv keeps its extreme week-12 value, which a subject-influence check should single out.
 */
import { mulberry32 } from "../../engine/seeded-uniform";
import {
  csvField,
  DEMO_DEFAULT_SEED,
  formatTenths,
  generateDemoDataset,
  normalSource,
  type DemoDataset,
} from "./demo-dataset";
import { DEMO_ARMS, type DemoColumn } from "./demo-study";

/** The scheduled post-baseline visits: label, week (the order column) and study day. */
export const DEMO_VISITS = [
  { label: "Week 2", week: 2, day: 14 },
  { label: "Week 4", week: 4, day: 28 },
  { label: "Week 8", week: 8, day: 56 },
  { label: "Week 12", week: 12, day: 84 },
] as const;

/** Share of a subject's week-12 change reached by each earlier visit (onset of effect). */
const ONSET = [0.3, 0.55, 0.8] as const;
/** Lag-one correlation of the visit-to-visit noise (AR(1) in visit position). */
const NOISE_CORRELATION = 0.6;
/** Noise spread at the mean baseline (points); it grows with the baseline, as in adeff.csv. */
const NOISE_SD = 4.5;
/** Mean change at week 12 by arm, for subjects who left before it (adeff.csv's arm means). */
const ARM_MEAN_CHANGE = [-8, -12.5, -18] as const;

/** Data dictionary of advisits.csv, one entry per column, in file order. */
export const DEMO_VISITS_DICTIONARY: readonly DemoColumn[] = [
  { name: "subjid", label: "Pseudonymous subject code", type: "string", unit: null },
  { name: "arm", label: "Randomised arm", type: "string", unit: null },
  {
    name: "stratum",
    label: "Baseline severity stratum (screening score < 65 / >= 65)",
    type: "string",
    unit: null,
  },
  { name: "fasfl", label: "Full analysis set flag (Y, N)", type: "string", unit: null },
  { name: "avisit", label: "Analysis visit", type: "string", unit: null },
  {
    name: "avisitn",
    label: "Analysis visit, week number (orders the visits)",
    type: "integer",
    unit: "weeks",
  },
  { name: "base", label: "Baseline Itch Burden Score", type: "decimal", unit: "points (0-100)" },
  { name: "aval", label: "Itch Burden Score at the visit", type: "decimal", unit: "points (0-100)" },
  { name: "chg", label: "Change from baseline at the visit (aval - base)", type: "decimal", unit: "points" },
];

const tenthsOf = (text: string): number => Math.round(Number(text) * 10);

/** Generates advisits.csv's rows from adeff.csv's (same seed). Pure: the same seed gives the same rows. */
export function generateDemoVisits(seed: number = DEMO_DEFAULT_SEED): DemoDataset {
  const subjects = generateDemoDataset(seed).rows;
  const u = mulberry32(seed + 12);
  const normal = normalSource(u);
  const columns = DEMO_VISITS_DICTIONARY.map((c) => c.name);
  const rows: Record<string, string>[] = [];
  for (const s of subjects) {
    if (s.fasfl !== "Y") continue;
    const baseTenths = tenthsOf(s.base);
    const base = baseTenths / 10;
    const arm = DEMO_ARMS.findIndex((a) => a.label === s.arm);
    const week12 = s.chg === "" ? null : tenthsOf(s.chg);
    // a subject who left early: its course toward a week-12 change it never reached
    const target = week12 !== null ? week12 / 10 : ARM_MEAN_CHANGE[arm] - 0.12 * (base - 63) + 6 * normal();
    const sd = NOISE_SD * (base / 63);
    const lastDay = Number(s.expdays);
    let noise = normal();
    DEMO_VISITS.forEach((visit, v) => {
      if (v > 0) noise = NOISE_CORRELATION * noise + Math.sqrt(1 - NOISE_CORRELATION ** 2) * normal();
      if (visit.day > lastDay && !(v === DEMO_VISITS.length - 1 && week12 !== null)) return;
      let chgTenths: number;
      if (v === DEMO_VISITS.length - 1) {
        if (week12 === null) return;
        chgTenths = week12;
      } else {
        const raw = Math.round(10 * (ONSET[v] * target + sd * noise));
        // the score stays on its 0–100 scale
        chgTenths = Math.min(1000 - baseTenths, Math.max(-baseTenths, raw));
      }
      rows.push({
        subjid: s.subjid,
        arm: s.arm,
        stratum: s.stratum,
        fasfl: s.fasfl,
        avisit: visit.label,
        avisitn: String(visit.week),
        base: s.base,
        aval: formatTenths(baseTenths + chgTenths),
        chg: formatTenths(chgTenths),
      });
    });
  }
  return { columns, rows };
}

/** advisits.csv as RFC 4180 CSV: header row, "\n" line endings, trailing newline. */
export function demoVisitsCsv(seed: number = DEMO_DEFAULT_SEED): string {
  const { columns, rows } = generateDemoVisits(seed);
  const lines = [columns.map(csvField).join(",")];
  for (const row of rows) lines.push(columns.map((c) => csvField(row[c] ?? "")).join(","));
  return lines.join("\n") + "\n";
}
