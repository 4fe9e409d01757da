/**
 * The demo study's dataset: reproducible bytes, sane contents, no identifiers, and the planted
 * findings present. The findings are measured by R (the oracle: stats::lm/glm, lmtest::bptest,
 * lmtest::resettest, car::leveneTest with center = median, MASS::glm.nb) in check-demo.R; its
 * output is committed as demo-findings.json and re-run here when Rscript is installed.
 * To refresh after a deliberate change of the generator:
 *   npx tsx scripts/write-demo-data.ts data/demo/adeff.csv
 *   Rscript tests/demo/check-demo.R data/demo/adeff.csv > tests/demo/demo-findings.json
 */
import { execFileSync, spawnSync } from "node:child_process";
import { createHash } from "node:crypto";
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { DEMO_DEFAULT_SEED, demoDatasetCsv, generateDemoDataset } from "../../app/.server/demo/demo-dataset";
import {
  DEMO_ARMS,
  DEMO_DATA_DICTIONARY,
  DEMO_REGIONS,
  DEMO_STRATA,
} from "../../app/.server/demo/demo-study";

/** SHA-256 of demoDatasetCsv() with the default seed; change only on purpose. */
const EXPECTED_CSV_SHA256 = "030b0320c868e1ec3c7a9f47a1c40aced876a97ef9cf7b83563fcca3011eb3e6";
/** MD5 of the same bytes, as base R (tools::md5sum) records it in demo-findings.json. */
const EXPECTED_CSV_MD5 = "2285165b778efd9a8319b5d0c9a24253";
const INFLUENTIAL_SUBJECT = "QMT301-0217";

const findingsPath = join(import.meta.dirname, "demo-findings.json");
const rScript = join(import.meta.dirname, "check-demo.R");

interface Findings {
  csvMd5: string;
  rows: number;
  ancova: {
    n: number;
    parameters: number;
    highVsPlacebo: { estimate: number; p: number };
    lowVsPlacebo: { estimate: number; p: number };
    breuschPaganModelP: number;
    breuschPaganBaseP: number;
    brownForsytheArmP: number;
    resetP: number;
    ageQuadraticP: number;
    cooksThreshold: number;
    cooksMax: { subjid: string; cooksD: number; leverage: number; standardizedResidual: number };
    cooksSecond: { subjid: string; cooksD: number };
    leverageThreshold: number;
  };
  flares: { poissonPearsonChi2PerDf: number; highVsPlaceboRateRatio: number };
  responder: { events: number; nonEvents: number; eventsPerVariable: number };
}

const digest = (algo: "sha256" | "md5", text: string): string =>
  createHash(algo).update(text, "utf8").digest("hex");
const committed = JSON.parse(readFileSync(findingsPath, "utf8")) as Findings;
const hasR = spawnSync("Rscript", ["--version"], { stdio: "ignore" }).status === 0;

describe("demo dataset: reproducible bytes", () => {
  it("gives byte-identical CSV for the same seed", () => {
    expect(demoDatasetCsv()).toBe(demoDatasetCsv(DEMO_DEFAULT_SEED));
    expect(generateDemoDataset(7)).toEqual(generateDemoDataset(7));
    expect(demoDatasetCsv(7)).not.toBe(demoDatasetCsv());
  });

  it("matches the recorded SHA-256", () => {
    const csv = demoDatasetCsv();
    expect(digest("sha256", csv)).toBe(EXPECTED_CSV_SHA256);
    expect(digest("md5", csv)).toBe(EXPECTED_CSV_MD5);
  });

  it("is RFC 4180 CSV with a header row and LF line endings", () => {
    const csv = demoDatasetCsv();
    expect(csv).not.toContain("\r");
    expect(csv.endsWith("\n")).toBe(true);
    const lines = csv.trimEnd().split("\n");
    expect(lines[0]).toBe(DEMO_DATA_DICTIONARY.map((c) => c.name).join(","));
    for (const line of lines) expect(line.split(",")).toHaveLength(DEMO_DATA_DICTIONARY.length);
  });
});

describe("demo dataset: contents", () => {
  const { columns, rows } = generateDemoDataset();
  const num = (s: string): number => Number(s);

  it("has 450 subjects and the dictionary's columns", () => {
    expect(rows).toHaveLength(450);
    expect(columns).toEqual(DEMO_DATA_DICTIONARY.map((c) => c.name));
  });

  it("balances the arms 1:1:1 overall and within each stratum", () => {
    for (const arm of DEMO_ARMS) {
      const inArm = rows.filter((r) => r.arm === arm.label);
      expect(Math.abs(inArm.length - 150)).toBeLessThanOrEqual(3);
      for (const stratum of DEMO_STRATA) {
        const cell = inArm.filter((r) => r.stratum === stratum).length;
        const total = rows.filter((r) => r.stratum === stratum).length;
        expect(Math.abs(cell - total / 3)).toBeLessThanOrEqual(2);
      }
    }
  });

  it("holds no direct identifiers", () => {
    const forbidden = /name|initial|birth|dob|date|email|phone|address|postcode|zip|ssn|mrn/i;
    for (const c of columns) expect(c).not.toMatch(forbidden);
    const ids = rows.map((r) => r.subjid);
    expect(new Set(ids).size).toBe(rows.length);
    for (const id of ids) expect(id).toMatch(/^QMT301-\d{4}$/);
    const categorical = new Set<string>([
      ...DEMO_ARMS.map((a) => a.label),
      ...DEMO_STRATA,
      ...DEMO_REGIONS,
      "F",
      "M",
      "Y",
      "N",
    ]);
    for (const r of rows) {
      for (const c of columns) {
        const v = r[c];
        if (c === "subjid" || v === "" || /^-?\d+(\.\d+)?$/.test(v)) continue;
        expect(categorical.has(v), `${c}=${v}`).toBe(true);
      }
    }
  });

  it("keeps values in sane ranges and derived columns consistent", () => {
    for (const r of rows) {
      if (r.age !== "") {
        expect(Number.isInteger(num(r.age))).toBe(true);
        expect(num(r.age)).toBeGreaterThanOrEqual(18);
        expect(num(r.age)).toBeLessThanOrEqual(90);
      }
      expect(num(r.base)).toBeGreaterThanOrEqual(40);
      expect(num(r.base)).toBeLessThanOrEqual(100);
      expect(r.stratum === "Severe" || r.stratum === "Moderate").toBe(true);
      if (r.wk12 === "") {
        expect(r.chg).toBe("");
        expect(r.resp).toBe("");
      } else {
        expect(num(r.wk12)).toBeGreaterThanOrEqual(0);
        expect(num(r.wk12)).toBeLessThanOrEqual(100);
        const chgTenths = Math.round(num(r.wk12) * 10) - Math.round(num(r.base) * 10);
        expect(Math.round(num(r.chg) * 10)).toBe(chgTenths);
        const improved = -chgTenths >= 0.3 * Math.round(num(r.base) * 10);
        expect(r.resp).toBe(improved ? "1" : "0");
      }
      expect(Number.isInteger(num(r.flares)) && num(r.flares) >= 0).toBe(true);
      expect(num(r.expdays)).toBeGreaterThanOrEqual(1);
      expect(num(r.expdays)).toBeLessThanOrEqual(95);
      expect(r.logexp).toBe(Math.log(num(r.expdays)).toFixed(6));
    }
  });

  it("has a few missing endpoint and covariate values and a few subjects outside the FAS", () => {
    const missingWk12 = rows.filter((r) => r.wk12 === "").length;
    const missingAge = rows.filter((r) => r.age === "").length;
    const notFas = rows.filter((r) => r.fasfl === "N").length;
    expect(missingWk12).toBeGreaterThan(5);
    expect(missingWk12).toBeLessThan(45);
    expect(missingAge).toBeGreaterThan(0);
    expect(missingAge).toBeLessThan(10);
    expect(notFas).toBeGreaterThan(0);
    expect(notFas).toBeLessThan(15);
  });
});

describe("demo dataset: planted findings (figures from R, tests/demo/check-demo.R)", () => {
  const a = committed.ancova;

  it("were measured on the current bytes", () => {
    expect(committed.csvMd5).toBe(EXPECTED_CSV_MD5);
    expect(committed.rows).toBe(450);
  });

  it("keeps a clear treatment effect: high dose vs placebo", () => {
    expect(a.highVsPlacebo.estimate).toBeLessThan(-5);
    expect(a.highVsPlacebo.p).toBeLessThan(0.001);
  });

  it("has residual spread growing with baseline and differing by arm", () => {
    expect(a.breuschPaganModelP).toBeLessThan(0.01);
    expect(a.breuschPaganBaseP).toBeLessThan(0.01);
    expect(a.brownForsytheArmP).toBeLessThan(0.01);
  });

  it("has one clearly influential subject", () => {
    expect(a.cooksMax.subjid).toBe(INFLUENTIAL_SUBJECT);
    expect(a.cooksMax.cooksD).toBeGreaterThan(10 * a.cooksThreshold);
    expect(a.cooksMax.cooksD).toBeGreaterThan(3 * a.cooksSecond.cooksD);
    expect(a.cooksMax.leverage).toBeGreaterThan(a.leverageThreshold);
    expect(Math.abs(a.cooksMax.standardizedResidual)).toBeGreaterThan(4);
  });

  it("has an age effect that is not linear", () => {
    expect(a.ageQuadraticP).toBeLessThan(0.01);
  });

  it("has overdispersed flare counts and enough responder events", () => {
    expect(committed.flares.poissonPearsonChi2PerDf).toBeGreaterThan(1.5);
    expect(committed.responder.eventsPerVariable).toBeGreaterThanOrEqual(10);
  });

  it.skipIf(!hasR)("R reproduces the committed figures from the generated CSV", () => {
    const dir = mkdtempSync(join(tmpdir(), "plumbline-demo-"));
    try {
      const csvPath = join(dir, "adeff.csv");
      writeFileSync(csvPath, demoDatasetCsv(), "utf8");
      const out = execFileSync("Rscript", [rScript, csvPath], { encoding: "utf8" });
      const fresh = JSON.parse(out) as Findings;
      expect(fresh.csvMd5).toBe(EXPECTED_CSV_MD5);
      expect(fresh.ancova.cooksMax.subjid).toBe(a.cooksMax.subjid);
      const pairs: [number, number][] = [
        [fresh.ancova.highVsPlacebo.estimate, a.highVsPlacebo.estimate],
        [fresh.ancova.breuschPaganModelP, a.breuschPaganModelP],
        [fresh.ancova.brownForsytheArmP, a.brownForsytheArmP],
        [fresh.ancova.ageQuadraticP, a.ageQuadraticP],
        [fresh.ancova.cooksMax.cooksD, a.cooksMax.cooksD],
        [fresh.flares.poissonPearsonChi2PerDf, committed.flares.poissonPearsonChi2PerDf],
      ];
      // Six significant digits are committed: compare relatively.
      for (const [got, want] of pairs) {
        expect(Math.abs(got - want)).toBeLessThanOrEqual(1e-5 * Math.abs(want));
      }
      expect(fresh.responder.events).toBe(committed.responder.events);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
