/**
 * Subject-level dataset of the invented demo study QMT-301 (see demo-study.ts), generated from a
 * fixed seed so the same bytes come out on every run and machine.
 *
 * The data carry findings that an audit of the primary ANCOVA
 * (chg ~ arm + base + stratum + region + sex + age) is meant to surface:
 *  - residual spread grows with the baseline score and differs by arm;
 *  - one mis-stratified subject with an extreme week-12 value dominates Cook's distance;
 *  - age acts on the change in a U shape, not linearly;
 *  - flare counts are gamma-Poisson (negative-binomial-like), so a Poisson fit is overdispersed.
 * The high dose still improves the score clearly over placebo.
 */

import {
  DEMO_ARMS,
  DEMO_DATA_DICTIONARY,
  DEMO_REGIONS,
  DEMO_RESPONDER_FRACTION,
  DEMO_SEVERE_CUTOFF,
  DEMO_STRATA,
} from "./demo-study";
import { mulberry32 } from "../../engine/seeded-uniform";

export const DEMO_DEFAULT_SEED = 301_301;
export const DEMO_SUBJECT_COUNT = 450;

/** Index (0-based) of the planted mis-stratified subject with an extreme week-12 value. */
const PLANTED_INFLUENTIAL_INDEX = 216;

export interface DemoDataset {
  columns: string[];
  rows: Record<string, string>[];
}

/** A uniform source on [0, 1). */
type Uniform = () => number;

/**
 * Standard normal draws by the polar form of the Box–Muller transform (Marsaglia and Bray, 1964).
 * It needs only log and sqrt; values are rounded before they are written, so last-bit
 * differences in Math.log could not change the file.
 */
export function normalSource(u: Uniform): () => number {
  let spare: number | null = null;
  return () => {
    if (spare !== null) {
      const z = spare;
      spare = null;
      return z;
    }
    for (;;) {
      const x = 2 * u() - 1;
      const y = 2 * u() - 1;
      const s = x * x + y * y;
      if (s > 0 && s < 1) {
        const f = Math.sqrt((-2 * Math.log(s)) / s);
        spare = y * f;
        return x * f;
      }
    }
  };
}

/** Gamma(shape, scale 1) by Marsaglia and Tsang (2000), with the shape < 1 boost. */
function gammaDraw(shape: number, u: Uniform, normal: () => number): number {
  if (shape < 1) return gammaDraw(shape + 1, u, normal) * Math.pow(u(), 1 / shape);
  const d = shape - 1 / 3;
  const c = 1 / Math.sqrt(9 * d);
  for (;;) {
    const z = normal();
    const v0 = 1 + c * z;
    if (v0 <= 0) continue;
    const v = v0 * v0 * v0;
    const w = u();
    if (Math.log(w) < 0.5 * z * z + d - d * v + d * Math.log(v)) return d * v;
  }
}

/** Poisson(mean) by sequential inversion; means here are small (under 30). */
function poissonDraw(mean: number, u: Uniform): number {
  let k = 0;
  let p = Math.exp(-mean);
  let cdf = p;
  const target = u();
  while (target > cdf && k < 500) {
    k += 1;
    p *= mean / k;
    cdf += p;
  }
  return k;
}

function clamp(x: number, lo: number, hi: number): number {
  return Math.min(hi, Math.max(lo, x));
}

/** Writes an integer count of tenths as a decimal with one place, without floating point. */
export function formatTenths(tenths: number): string {
  const sign = tenths < 0 ? "-" : "";
  const abs = Math.abs(tenths);
  return `${sign}${Math.floor(abs / 10)}.${abs % 10}`;
}

/** Fisher–Yates shuffle of a permuted block of two of each arm. */
function permutedBlock(u: Uniform): number[] {
  const block = [0, 0, 1, 1, 2, 2];
  for (let i = block.length - 1; i > 0; i--) {
    const j = Math.floor(u() * (i + 1));
    [block[i], block[j]] = [block[j], block[i]];
  }
  return block;
}

/** Mean change from baseline by arm (points): placebo response, then dose effects. */
const ARM_MEAN_CHANGE = [-8, -12.5, -18] as const;
/** Residual spread multiplier by arm: the active arms respond more variably. */
const ARM_SPREAD = [1.0, 1.35, 1.75] as const;
/** Flare rate ratio by arm relative to placebo. */
const ARM_FLARE_RATIO = [1.0, 0.8, 0.6] as const;
const PLACEBO_FLARES_PER_84_DAYS = 3.2;
/** Gamma shape of the subject-level flare frailty: smaller is more overdispersed. */
const FLARE_FRAILTY_SHAPE = 1.3;

/**
 * Generates the demo dataset. Pure: the same seed gives the same rows.
 * Columns and their meaning are listed in DEMO_DATA_DICTIONARY.
 */
export function generateDemoDataset(seed: number = DEMO_DEFAULT_SEED): DemoDataset {
  const u = mulberry32(seed);
  const normal = normalSource(u);
  const columns = DEMO_DATA_DICTIONARY.map((c) => c.name);

  const allocation: number[][] = DEMO_STRATA.map(() => []);
  const nextArm = (stratum: number): number => {
    const list = allocation[stratum];
    if (list.length === 0) list.push(...permutedBlock(u));
    return list.shift() as number;
  };

  const rows: Record<string, string>[] = [];
  for (let i = 0; i < DEMO_SUBJECT_COUNT; i++) {
    const regionDraw = u();
    const region = regionDraw < 0.4 ? 0 : regionDraw < 0.75 ? 1 : 2;
    const sex = u() < 0.58 ? "F" : "M";
    let age = Math.round(clamp(49 + 14 * normal(), 18, 84));
    const screening = clamp(63 + 11 * normal(), 42, 98);
    let stratum = screening >= DEMO_SEVERE_CUTOFF ? 1 : 0;
    let baseTenths = Math.round(10 * clamp(screening + 4 * normal(), 40, 99));

    const planted = i === PLANTED_INFLUENTIAL_INDEX;
    if (planted) {
      // Randomised as "Severe" but the recorded baseline is far lower, and the week-12 value
      // is extreme: the kind of record an influence check should single out.
      stratum = 1;
      age = 81;
      baseTenths = 412;
    }
    const arm = nextArm(stratum);

    const base = baseTenths / 10;
    const ageTerm = 2.4 * ((age - 50) / 15) ** 2;
    const spread = 5.5 * (base / 63) ** 2.2 * ARM_SPREAD[arm];
    const regionTerm = [0, 1.5, -1][region];
    const sexTerm = sex === "F" ? -0.8 : 0;
    const meanChange =
      ARM_MEAN_CHANGE[arm] - 0.12 * (base - 63) - 1.5 * stratum + regionTerm + sexTerm + ageTerm;
    let wk12Tenths = Math.round(10 * clamp(base + meanChange + spread * normal(), 0, 100));
    if (planted) wk12Tenths = 934;

    // Population and completion.
    const notTreated = u() < 0.013 && !planted;
    const droppedOut = u() < 0.04 && !notTreated && !planted;
    const ageMissing = u() < 0.008 && !notTreated && !planted;

    let expdays: number;
    if (notTreated) expdays = 1 + Math.floor(u() * 3);
    else if (droppedOut) expdays = 18 + Math.floor(u() * 55);
    else expdays = 80 + Math.floor(u() * 11);

    const frailty = gammaDraw(FLARE_FRAILTY_SHAPE, u, normal) / FLARE_FRAILTY_SHAPE;
    const flareMean =
      (PLACEBO_FLARES_PER_84_DAYS / 84) * expdays * ARM_FLARE_RATIO[arm] * (base / 63) * frailty;
    const flares = notTreated ? 0 : poissonDraw(flareMean, u);

    const hasWeek12 = !notTreated && !droppedOut;
    const chgTenths = wk12Tenths - baseTenths;
    const responder = chgTenths <= -DEMO_RESPONDER_FRACTION * baseTenths ? "1" : "0";

    rows.push({
      subjid: `QMT301-${String(i + 1).padStart(4, "0")}`,
      arm: DEMO_ARMS[arm].label,
      stratum: DEMO_STRATA[stratum],
      region: DEMO_REGIONS[region],
      sex,
      age: ageMissing ? "" : String(age),
      base: formatTenths(baseTenths),
      wk12: hasWeek12 ? formatTenths(wk12Tenths) : "",
      chg: hasWeek12 ? formatTenths(chgTenths) : "",
      fasfl: notTreated ? "N" : "Y",
      resp: hasWeek12 ? responder : "",
      flares: String(flares),
      expdays: String(expdays),
      logexp: Math.log(expdays).toFixed(6),
    });
  }
  return { columns, rows };
}

/** Quotes a CSV field when RFC 4180 requires it (comma, quote, CR or LF). */
export function csvField(value: string): string {
  return /[",\r\n]/.test(value) ? `"${value.replace(/"/g, '""')}"` : value;
}

/** The demo dataset as RFC 4180 CSV: header row, "\n" line endings, trailing newline. */
export function demoDatasetCsv(seed: number = DEMO_DEFAULT_SEED): string {
  const { columns, rows } = generateDemoDataset(seed);
  const lines = [columns.map(csvField).join(",")];
  for (const row of rows) lines.push(columns.map((c) => csvField(row[c] ?? "")).join(","));
  return lines.join("\n") + "\n";
}
