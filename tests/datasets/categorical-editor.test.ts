/**
 * The plan editor's covariate row for a numeric column that looks categorical: it says so, asks
 * "categorical or continuous" with no choice made, and shows the server's refusal beside the field.
 * Rendered with React's server renderer, as the page's first paint is.
 */
import { createElement } from "react";
import { renderToString } from "react-dom/server";
import { describe, expect, it } from "vitest";
import { PlannedModelEditor, type EditorForm } from "~/components/planned-model-editor";

const form: EditorForm = {
  key: "primary",
  title: "Primary efficacy",
  datasetName: "adeff",
  population: [],
  means: "equal",
  contrasts: "reference",
  multiplicity: "none",
  response: "chg",
  family: "gaussian",
  link: "",
  treatment: "arm",
  treatmentReference: "Placebo",
  covariates: [
    { variable: "sitegr1", categorical: null, reference: "" },
    { variable: "base", categorical: null, reference: "" },
  ],
  interactions: [],
  weights: "",
  offset: "",
  id: "",
  checks: [],
  sensitivity: [],
};
const datasets = [
  {
    name: "adeff",
    version: 1,
    rowCount: 96,
    columns: [
      {
        name: "arm",
        label: null,
        type: "text" as const,
        levels: [
          { value: "Active", count: 48 },
          { value: "Placebo", count: 48 },
        ],
      },
      {
        name: "sitegr1",
        label: "Pooled site group 1",
        type: "number" as const,
        levels: [
          { value: "701", count: 50 },
          { value: "703", count: 46 },
        ],
        looksCategorical: "2 distinct whole-number values",
      },
      { name: "base", label: null, type: "number" as const },
      { name: "chg", label: null, type: "number" as const },
    ],
  },
];
const message =
  "sitegr1 looks categorical (2 distinct whole-number values): choose whether it enters the model as categorical or continuous.";

describe("plan editor: covariate that looks categorical", () => {
  const html = renderToString(
    createElement(PlannedModelEditor, {
      initial: form,
      errors: { "covariate:sitegr1": message },
      datasets,
      checkCatalogue: [],
      isNew: false,
    }),
  );

  it("offers an explicit choice with nothing chosen, and shows the refusal beside the field", () => {
    expect(html).toContain("looks categorical (2 distinct whole-number values)");
    expect(html).toMatch(/<select[^>]*aria-label="How sitegr1 enters the model"[^>]*name="as:sitegr1"/);
    expect(html).toMatch(/<option value="" selected="">Choose…<\/option>/);
    expect(html).toContain(
      `id="cov-sitegr1-error" class="mt-1 text-xs font-medium text-finding" role="alert">${message}`,
    );
  });

  it("keeps the plain categorical box for a numeric column that does not look categorical", () => {
    expect(html).toContain('aria-label="Treat base as categorical" name="categorical:base"');
    expect(html).not.toContain('name="as:base"');
  });
});
