/**
 * An invented time-to-event dataset for the Cox tests: the trial-shaped data that
 * tests/reference/survival/generate.R wrote (no real people), and the plan editor's form for a
 * stratified Cox model of it, as a biostatistician fills it in.
 */
import { readFileSync } from "node:fs";
import path from "node:path";

export const COX_DATA_FILE = path.resolve("tests/reference/survival/data/trial-breslow-cluster.csv");
export const COX_VALUES_FILE = path.resolve("tests/reference/survival/values/trial-breslow-cluster.json");

export const coxCsv = (): string => readFileSync(COX_DATA_FILE, "utf8");

/** The R values of the same model (R's survival package; see the values file's `oracle`). */
export const coxReference = () =>
  JSON.parse(readFileSync(COX_VALUES_FILE, "utf8")) as {
    oracle: string;
    coefficients: {
      rName: string;
      estimate: number;
      ratio: number;
      ratioLower: number;
      ratioUpper: number;
    }[];
    survival: {
      level: string;
      stratum: string | null;
      time: number[];
      estimate: number[];
      lower: (number | null)[];
      upper: (number | null)[];
      atRisk: number[];
    }[];
  };

type TreatmentReference = {
  estimate: number;
  se: number;
  ratio: number;
  ratioLower: number;
  ratioUpper: number;
  p: number;
  naiveSe?: number;
};

/** R's answers for the Cox sensitivity analyses of the same data (tests/reference/survival/generate-sensitivity.R). */
export const coxSensitivityReference = () =>
  JSON.parse(
    readFileSync(path.resolve("tests/reference/survival/sensitivity/trial-breslow-cluster.json"), "utf8"),
  ) as {
    oracle: string;
    robustSubject: TreatmentReference & { naiveSe: number };
    unstratified: TreatmentReference;
    rmst: { tau: number; arms: { level: string; rmean: number; se: number }[] };
  };

export const COX_CHECK_KEYS = [
  "proportional_hazards",
  "functional_form_cox",
  "dfbetas_treatment_cox",
  "events_per_coefficient",
];

/** Time to event AVAL (CNSR = 0 an event), treatment TRTP against Placebo, AGE, BASE and STRAT2, stratified by STRAT1, Breslow ties. */
export function coxForm(): FormData {
  const f = new FormData();
  for (const [k, v] of Object.entries({
    key: "tte",
    title: "Time to first event",
    datasetName: "adtte",
    response: "AVAL",
    family: "cox",
    treatment: "TRTP",
    treatmentReference: "Placebo",
    id: "USUBJID",
    statusColumn: "CNSR",
    ties: "breslow",
    phTransform: "identity",
  }))
    f.set(k, v);
  f.append("eventValue", "0");
  f.append("stratum", "STRAT1");
  for (const c of ["AGE", "BASE", "STRAT2"]) f.append("covariate", c);
  for (const c of COX_CHECK_KEYS) f.set(`check:${c}:enabled`, "on");
  return f;
}
