/**
 * The API's answers as Zod schemas: the route handlers are typed by them and the OpenAPI
 * document (openapi.ts) is generated from them, so the two cannot disagree. Objects are
 * strict (`additionalProperties: false` in the document): a field the document does not
 * name is an error in the tests, which is how a leak of an undocumented field is caught.
 */
import { extendZodWithOpenApi, OpenAPIRegistry } from "@asteasolutions/zod-to-openapi";
import { z } from "zod";
import { CAUTION } from "~/shared/caution";
import { CHECKS, type CheckKey } from "~/engine/checks";
import { modelSpecSchema } from "~/engine/model-spec";
import { publishedValueSchema } from "~/engine/published-values";
import { repeatedSpecSchema } from "~/engine/repeated/repeated-spec";
import { coxSpecSchema } from "~/engine/survival/cox-spec";
import {
  covarianceStructureSchema,
  repeatedDfSchema,
  repeatedMethodSchema,
} from "~/engine/repeated/repeated-spec";
import { STUDY_ROLES } from "../db/schema";
import { STUDY_PERMISSIONS, type StudyAction } from "../permissions.server";
import { plannedCheckSchema, sensitivitySchema } from "../plans/planned-model";
import { API_ERROR_CODES } from "./respond.server";

extendZodWithOpenApi(z);

export const registry = new OpenAPIRegistry();

const STUDY_ACTIONS_LIST = Object.keys(STUDY_PERMISSIONS) as [StudyAction, ...StudyAction[]];

const Caution = z
  .literal(CAUTION)
  .describe(
    "Shown with every answer: results support, but do not replace, qualified statistical and medical review.",
  );
/** A number from a stored result; null where it is not defined (e.g. a p-value of an aliased coefficient). */
const Num = z.number().nullable();
const Time = z.string().describe("ISO 8601 UTC time");
const TimeOrNull = Time.nullable();
const Sha256 = z
  .string()
  .regex(/^[0-9a-f]{64}$/)
  .describe("SHA-256, lowercase hex");

/** An answer: the caution plus the endpoint's own fields. */
function answer<S extends z.ZodRawShape>(name: string, shape: S) {
  return registry.register(name, z.strictObject({ caution: Caution, ...shape }));
}

export const ErrorAnswer = answer("Error", {
  error: z.strictObject({
    code: z.enum(API_ERROR_CODES).describe("Stable: clients may branch on it"),
    message: z.string().describe("What went wrong and what to do, in words for a person"),
  }),
});

// Studies -------------------------------------------------------------------------------------

const Study = registry.register(
  "Study",
  z.strictObject({
    id: z.string(),
    code: z.string(),
    title: z.string(),
    sponsor: z.string(),
    compound: z.string().nullable(),
    indication: z.string().nullable(),
    phase: z.string().nullable(),
    role: z.enum(STUDY_ROLES).describe("The token's person's role on this study"),
    allowedActions: z.array(z.enum(STUDY_ACTIONS_LIST)).describe("What that role may do on this study"),
  }),
);

export const StudiesAnswer = answer("StudiesAnswer", { studies: z.array(Study) });
export const StudyAnswer = answer("StudyAnswer", { study: Study });

// Datasets ------------------------------------------------------------------------------------

const DatasetVersion = registry.register(
  "DatasetVersion",
  z.strictObject({
    id: z.string(),
    version: z.int(),
    status: z.enum(["draft", "locked", "superseded"]),
    format: z.enum(["csv", "dataset-json", "xpt"]),
    fileName: z.string(),
    byteSize: z.int(),
    sha256: Sha256.describe("SHA-256 of the exact bytes uploaded; fixed when the version is locked"),
    rowCount: z.int(),
    columnCount: z.int(),
    uploadedBy: z.string().nullable(),
    uploadedAt: Time,
    lockedBy: z.string().nullable(),
    lockedAt: TimeOrNull,
    derivedFromVersion: z
      .int()
      .nullable()
      .describe("Set when this version was made from another by removing identifier columns"),
    removedColumns: z.array(z.string()),
  }),
);

const Column = registry.register(
  "Column",
  z.strictObject({
    name: z.string(),
    label: z.string().nullable(),
    type: z.enum(["number", "text", "date", "datetime"]),
    nonMissing: z.int(),
    missing: z.int(),
    min: Num.optional(),
    max: Num.optional(),
    mean: Num.optional(),
    sd: Num.optional(),
    earliest: z.string().optional(),
    latest: z.string().optional(),
    levels: z
      .array(z.strictObject({ value: z.string(), count: z.int() }))
      .optional()
      .describe(
        "Level counts of a text column with few distinct values; never given for subject identifier columns",
      ),
  }),
);

export const DatasetsAnswer = answer("DatasetsAnswer", {
  datasets: z.array(z.strictObject({ id: z.string(), name: z.string(), versions: z.array(DatasetVersion) })),
});

export const DatasetVersionAnswer = answer("DatasetVersionAnswer", {
  dataset: z.strictObject({ id: z.string(), name: z.string() }),
  version: DatasetVersion,
  keyColumns: z.array(z.string()).describe("Columns that identify a subject"),
  columns: z.array(Column),
});

// Analysis plans ------------------------------------------------------------------------------

const planVersionShape = {
  id: z.string(),
  planId: z.string(),
  planName: z.string(),
  version: z.int(),
  title: z.string(),
  status: z.enum(["draft", "awaiting_approval", "approved", "superseded"]),
  sapName: z.string().nullable(),
  sapVersion: z.string().nullable(),
  sapDate: z.string().nullable(),
  author: z.string().nullable(),
  approvedBy: z.string().nullable(),
  approvedAt: TimeOrNull,
  createdAt: Time,
  updatedAt: Time,
};
const PlanVersion = registry.register("PlanVersion", z.strictObject(planVersionShape));

const PlannedModel = registry.register(
  "PlannedModel",
  z.strictObject({
    id: z.string(),
    key: z.string(),
    title: z.string(),
    datasetName: z.string(),
    spec: z
      // a repeated-measures (MMRM) model first: it is a linear specification with a `repeated` part
      .union([repeatedSpecSchema, modelSpecSchema, coxSpecSchema])
      .describe(
        "The model specification: the same object the headless rerun command reads (linear or generalized linear; repeated measures with `repeated`; time to event with family cox)",
      ),
    checks: z.array(plannedCheckSchema),
    sensitivity: z.array(sensitivitySchema),
  }),
);

export const PlanVersionsAnswer = answer("PlanVersionsAnswer", { planVersions: z.array(PlanVersion) });
export const PlanVersionAnswer = answer("PlanVersionAnswer", {
  planVersion: registry.register(
    "PlanVersionDetail",
    z.strictObject({
      ...planVersionShape,
      editors: z.array(z.string()).describe("Everyone who saved a change to this version"),
    }),
  ),
  plannedModels: z.array(PlannedModel),
});

// Reruns --------------------------------------------------------------------------------------

const RerunStatus = z.enum(["queued", "running", "completed", "failed"]);

const Rerun = registry.register(
  "Rerun",
  z.strictObject({
    id: z.string(),
    kind: z.enum(["primary", "sensitivity"]),
    label: z.string().nullable(),
    status: RerunStatus,
    failureReason: z.string().nullable(),
    plannedModel: z.strictObject({ id: z.string(), key: z.string(), title: z.string() }),
    planVersion: z.strictObject({ id: z.string(), version: z.int() }),
    dataset: z.strictObject({ versionId: z.string(), name: z.string(), version: z.int(), sha256: Sha256 }),
    engineVersion: z.string().nullable(),
    resultSha256: Sha256.nullable().describe(
      "SHA-256 of the stored result; the same inputs always give the same hash",
    ),
    parentRerunId: z.string().nullable(),
    prespecified: z.boolean(),
    findings: z.int(),
    createdAt: Time,
    finishedAt: TimeOrNull,
    signedAt: TimeOrNull,
    publishedAt: TimeOrNull.describe("When the signature published it to the study's sponsor readers"),
  }),
);

const Interval = { se: Num, lower: Num, upper: Num };

/** An estimate at a visit with its interval and degrees of freedom (repeated measures). */
const DfInterval = {
  estimate: Num,
  se: Num,
  df: Num.describe("Degrees of freedom by the plan's method (Satterthwaite, Kenward–Roger or residual)"),
  lower: Num,
  upper: Num,
  seScale: z.literal("response"),
};
const VisitContrast = z.strictObject({
  label: z.string(),
  level: z.string(),
  reference: z.string(),
  visit: z.string(),
  ...DfInterval,
  statistic: Num,
  p: Num,
  pAdjusted: Num.optional().describe(
    "p adjusted for multiplicity by the plan's method within the contrasts at the same visit; absent when the plan names none",
  ),
});
const RepeatedFTest = z
  .strictObject({
    hypothesis: z.string(),
    statistic: Num,
    numeratorDf: z.number(),
    denominatorDf: Num,
    p: Num,
  })
  .nullable();

// Inlined, not registered (it is nullable in RerunResults): the headless command's answer for a
// repeated-measures model (app/engine/repeated/repeated-result.ts), subject-level parts only for
// roles that see subjects.
const RepeatedResults = z.strictObject({
  method: repeatedMethodSchema.describe("reml or ml"),
  dfMethod: repeatedDfSchema,
  n: z.int().describe("Records analysed"),
  excluded: z.int().describe("Records left out for a missing value"),
  subjectCount: z.int().describe("Subjects analysed"),
  covariance: z.strictObject({
    structure: covarianceStructureSchema.describe("The covariance structure of the visits used"),
    planned: covarianceStructureSchema.describe("The structure the plan names first"),
    attempts: z
      .array(
        z.strictObject({
          structure: covarianceStructureSchema,
          converged: z.boolean(),
          iterations: z.int(),
          reason: z.string().nullable().describe("Why it was not used; null for the one used"),
        }),
      )
      .describe("Every structure tried, in the plan's order, the used one last"),
    converged: z.boolean(),
    iterations: z.int(),
    logLik: Num.describe("REML or ML log-likelihood"),
    aic: Num,
    bic: Num,
    parameterCount: z.int().describe("Coefficients and covariance parameters"),
    visits: z.array(z.string()).describe("The visits in order: rows and columns of the matrices"),
    matrix: z.array(z.array(Num)).describe("Estimated covariance of one subject's errors across the visits"),
    correlation: z.array(z.array(Num)),
  }),
  coefficients: z.array(z.strictObject({ name: z.string(), ...DfInterval, statistic: Num, p: Num })),
  coefficientCovariance: z.strictObject({
    type: z.enum(["model-based", "Kenward–Roger adjusted"]),
    names: z.array(z.string()),
    matrix: z.array(z.array(Num)),
  }),
  adjustedMeans: z
    .strictObject({
      treatment: z.string(),
      weighting: z.enum(["equal", "proportional"]),
      grid: z.strictObject({
        covariates: z.array(z.strictObject({ variable: z.string(), value: z.number() })),
        factors: z.array(z.string()),
        cells: z.array(z.strictObject({ levels: z.array(z.string()), weight: z.number() })),
      }),
      means: z.array(z.strictObject({ level: z.string(), visit: z.string(), ...DfInterval })),
      contrasts: z.array(VisitContrast).describe("Each arm against the reference arm at each visit"),
      pairwise: z.array(VisitContrast).describe("Every pair of arms at each visit"),
    })
    .nullable()
    .describe("Adjusted means by arm and visit; null when the model names no treatment"),
  tests: z.strictObject({
    treatment: RepeatedFTest.describe("F test of the treatment differences averaged over the visits"),
    treatmentByVisit: RepeatedFTest.describe(
      "F test that the treatment differences are the same at every visit",
    ),
    notes: z.array(z.string()),
  }),
  structureTest: z
    .strictObject({
      against: z.literal("unstructured"),
      statistic: Num,
      df: Num,
      p: Num,
      reason: z.string().nullable(),
    })
    .nullable()
    .describe(
      "Likelihood-ratio test of the structure used against the unstructured one; null when unstructured was used",
    ),
  counts: z
    .array(z.strictObject({ visit: z.string(), level: z.string().nullable(), subjects: z.int() }))
    .describe("Subjects with a record at each visit, by arm"),
  residualsByCell: z
    .array(
      z.strictObject({
        visit: z.string(),
        level: z.string().nullable(),
        records: z.int(),
        mean: Num,
        sd: Num,
      }),
    )
    .describe("Normalized residuals summarized by visit and arm"),
  influence: z.strictObject({
    method: z.string(),
    primaryVisit: z.string(),
    contrasts: z
      .array(z.string())
      .describe("The treatment contrasts at the primary visit whose change each subject's deletion gives"),
  }),
  observations: z
    .array(
      z.strictObject({
        row: z.int().describe("1-based data row of the locked file"),
        subjectId: z.string(),
        visit: z.string(),
        fitted: Num,
        residual: Num,
        normalizedResidual: Num,
      }),
    )
    .optional()
    .describe("Per record; only for roles that may see subject-level data"),
  subjects: z
    .array(
      z.strictObject({
        subjectId: z.string(),
        cooksDistance: Num,
        treatmentChange: z
          .array(Num)
          .describe("Change in each contrast of `influence.contrasts` without the subject"),
      }),
    )
    .optional()
    .describe("Per subject influence; only for roles that may see subject-level data"),
});

const Results = registry.register(
  "RerunResults",
  z.strictObject({
    description: z.string(),
    method: z.string(),
    family: z
      .string()
      .describe(
        "gaussian (also for repeated measures), binomial, poisson, quasipoisson, negative-binomial or cox (time to event)",
      ),
    link: z.string(),
    familyLabel: z
      .string()
      .describe(
        'The family and link in words: "Normal (identity link)", "Binomial (logit link)", "Cox proportional hazards"',
      ),
    covarianceType: z
      .enum(["model", "HC0", "HC1", "HC2", "HC3"])
      .nullable()
      .describe("Linear models: the coefficient table's standard errors"),
    n: z.int(),
    rank: z.int(),
    dfResidual: Num,
    rows: z.strictObject({
      inFile: z.int(),
      outsidePopulation: z.int(),
      excludedByOption: z.int(),
      missingCells: z.int(),
      used: z.int(),
    }),
    population: z
      .array(
        z.strictObject({
          condition: z.string(),
          removed: z
            .int()
            .nullable()
            .describe("Null for reruns stored before rows were counted per condition"),
        }),
      )
      .describe(
        "The population conditions in the plan's order, each with the rows it removed (a row is counted by the first condition it fails); empty: every row",
      ),
    treatmentEffect: z
      .strictObject({
        contrastSet: z.enum(["reference", "pairwise"]),
        multiplicity: z.enum(["none", "bonferroni", "holm", "hochberg"]),
        test: z
          .union([
            z.strictObject({
              name: z.literal("F"),
              term: z.string(),
              statistic: Num,
              df1: z.int(),
              df2: z
                .number()
                .describe(
                  "Whole for linear models; Satterthwaite or Kenward–Roger (fractional) for repeated measures",
                ),
              p: Num,
              reason: z.string().optional(),
            }),
            z.strictObject({
              name: z.literal("χ²"),
              term: z.string(),
              statistic: Num,
              df: z.int(),
              p: Num,
              reason: z.string().optional(),
            }),
          ])
          .nullable()
          .describe(
            "Overall test of the treatment term: F for linear and repeated-measures models, likelihood-ratio χ² for generalized linear models",
          ),
      })
      .nullable()
      .describe(
        "The plan's contrasts and multiplicity method with the overall treatment test; null for time-to-event models",
      ),
    coefficients: z.array(
      z.strictObject({
        name: z
          .string()
          .describe(
            '"Intercept", a variable, "VAR: LEVEL" for a level of a factor; interaction parts joined by " × " ("arm: High dose × base")',
          ),
        term: z.string().nullable(),
        estimate: Num,
        statistic: Num,
        p: Num,
        ...Interval,
      }),
    ),
    fit: z
      .strictObject({
        sigma: Num,
        rSquared: Num,
        adjRSquared: Num,
        fStatistic: Num,
        fP: Num,
        aic: Num,
        deviance: Num,
        dispersion: Num,
      })
      .describe("Linear models fill sigma to fP; generalized linear models deviance and dispersion"),
    adjustedMeans: z
      .array(z.strictObject({ level: z.string(), estimate: Num, ...Interval, hc3: z.strictObject(Interval) }))
      .nullable()
      .describe("Adjusted treatment means; null when the model names no treatment"),
    contrasts: z
      .array(
        z.strictObject({
          label: z.string(),
          level: z.string(),
          reference: z.string(),
          estimate: Num,
          statistic: Num,
          p: Num,
          pAdjusted: Num.optional().describe(
            "p adjusted for multiplicity by the plan's method; absent when the plan names none",
          ),
          ...Interval,
          hc3: z
            .strictObject({ statistic: Num, p: Num, pAdjusted: Num.optional(), ...Interval })
            .nullable()
            .describe(
              "Linear models: HC3 errors; generalized linear models: the variance of Ye et al. (2023), null where it does not apply",
            ),
        }),
      )
      .nullable()
      .describe(
        "Treatment contrasts (against the reference arm or between every pair of arms, as planned), model-based and with robust errors; generalized linear models give marginal contrasts labelled with their measure; repeated-measures models the contrasts at the primary visit (every visit in `repeated`)",
      ),
    repeated: RepeatedResults.nullable().describe(
      "Repeated-measures (MMRM) models: the covariance of the visits, coefficients with df, means and contrasts by visit, F tests, subjects per visit, and (for roles that see subjects) records and subject influence; null for other models",
    ),
  }),
);

const checkKeys = CHECKS.map((c) => c.key) as [CheckKey, ...CheckKey[]];

const Check = registry.register(
  "CheckOutcome",
  z.strictObject({
    key: z
      .enum([...checkKeys, "reproduction"])
      .describe(
        '"reproduction": the reproduction check of the published values (its values in the answer\'s `reproduction`)',
      ),
    label: z.string(),
    outcome: z.enum(["within", "finding", "not_computed"]),
    statistic: z.string(),
    threshold: z.string(),
    numbers: z
      .strictObject({
        measure: z
          .string()
          .describe('What `statistic` is: "Shapiro–Wilk statistic", "largest Cook\'s distance"'),
        statistic: Num,
        df: z.array(Num).nullable().describe("Degrees of freedom of a test statistic: one for χ², two for F"),
        threshold: z
          .number()
          .describe("The bound as applied (4/n worked out), or the planned level for a p-value"),
        compares: z
          .enum(["statistic above", "statistic below", "p below"])
          .describe("What is compared with the threshold, and which side is a finding"),
        p: Num,
      })
      .nullable()
      .describe("The numbers behind the texts; null for results stored before they were recorded"),
    summary: z.string(),
    remedy: z.string(),
    flaggedCount: z.int(),
    flagged: z
      .array(
        z.strictObject({
          rank: z.int().describe("1 is the most extreme"),
          value: Num,
          subjectId: z.string().optional().describe("Only for roles that may see subject-level data"),
        }),
      )
      .describe("The five most extreme flagged subjects"),
  }),
);

const Assessment = z.strictObject({
  category: z.enum(["model_assumption", "data", "specification"]),
  impact: z.enum(["none", "minor", "changes_conclusion"]),
  action: z.string(),
  rationale: z.string(),
  recordedBy: z.string().nullable(),
  recordedAt: Time,
});

const Finding = registry.register(
  "Finding",
  z.strictObject({
    id: z.string(),
    kind: z.enum(["check", "not_estimable"]),
    checkKey: z.string(),
    statistic: z.string().nullable(),
    threshold: z.string().nullable(),
    summary: z.string(),
    assessment: Assessment.nullable(),
  }),
);

const ReportedContrast = z.strictObject({ label: z.string(), estimate: Num, lower: Num, upper: Num, p: Num });

export const RerunsAnswer = answer("RerunsAnswer", {
  reruns: z.array(Rerun).describe("Newest first. Sponsor readers get only published reruns."),
});

// Inlined, not registered: a registered schema made nullable is written as allOf [$ref, null],
// which no null satisfies.
const Reproduction = z.strictObject({
  outcome: z.enum(["reproduced", "not_reproduced"]),
  rule: z.string().describe("The rounding rule applied"),
  values: z.array(
    z.strictObject({
      published: publishedValueSchema,
      quantity: z.string().describe("The quantity in words, naming the rerun's coefficient or contrast"),
      printed: z.string().describe("The value as the study report printed it"),
      decimals: z.int(),
      rerunValue: Num.describe("As computed; null when the rerun has no such quantity"),
      rerunRounded: z
        .string()
        .nullable()
        .describe("The rerun's value rounded to the printed decimals, half away from zero"),
      outcome: z.enum(["reproduced", "not_reproduced"]),
      reason: z.string(),
    }),
  ),
});

export const RerunAnswer = answer("RerunAnswer", {
  rerun: Rerun,
  results: Results.nullable().describe("Null until the rerun has completed"),
  checks: z
    .array(Check)
    .describe(
      'The checks of the plan; the reproduction check ("reproduction") is among them when the plan gives published values',
    ),
  reproduction: Reproduction.nullable().describe(
    "Each published value against the rerun; null when the plan gives none or the rerun has not completed",
  ),
  findings: z.array(Finding),
  signatures: z.array(z.strictObject({ signerName: z.string(), meaning: z.string(), signedAt: Time })),
  sensitivity: z
    .array(
      z.strictObject({
        id: z.string(),
        label: z.string().nullable(),
        status: RerunStatus,
        prespecified: z.boolean(),
        contrasts: z
          .array(ReportedContrast)
          .describe(
            "As the analysis reports them: HC3 intervals for the robust-errors analysis, sandwich intervals for the Cox analysis clustered by subject",
          ),
      }),
    )
    .describe("Sensitivity reruns beside a primary rerun, with their treatment contrasts"),
});

// Deviations ----------------------------------------------------------------------------------

export const DeviationsAnswer = answer("DeviationsAnswer", {
  deviations: z.array(
    registry.register(
      "Deviation",
      z.strictObject({
        id: z.string(),
        category: z.enum(["model_assumption", "data", "specification"]),
        impact: z.enum(["none", "minor", "changes_conclusion"]),
        action: z.string(),
        rationale: z.string(),
        recordedBy: z.string().nullable(),
        recordedAt: Time,
        rerun: z
          .strictObject({ id: z.string(), label: z.string().nullable(), signedAt: TimeOrNull })
          .nullable(),
        plannedModel: z.strictObject({ key: z.string(), title: z.string() }).nullable(),
        finding: z
          .strictObject({
            id: z.string(),
            checkKey: z.string(),
            summary: z.string(),
            statistic: z.string().nullable(),
            threshold: z.string().nullable(),
          })
          .nullable(),
      }),
    ),
  ),
});

// Appendices ----------------------------------------------------------------------------------

export const AppendicesAnswer = answer("AppendicesAnswer", {
  appendices: z.array(
    registry.register(
      "Appendix",
      z.strictObject({
        id: z.string(),
        planVersionId: z.string().nullable(),
        rerunIds: z.array(z.string()),
        sha256: Sha256.describe("SHA-256 of the stored .docx file"),
        byteSize: z.int(),
        exportedBy: z.string().nullable(),
        exportedAt: Time,
        download: z.string().describe("Path of the file under this API"),
      }),
    ),
  ),
});

export type Body<S extends z.ZodType> = Omit<z.output<S>, "caution">;
