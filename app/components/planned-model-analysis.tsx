/**
 * The editor's treatment-effect choices for linear and generalized linear models: how adjusted
 * means weight the other factors, which contrasts are made, and the multiplicity adjustment of
 * their p-values. Field names `means`, `contrasts`, `multiplicity` (read by planned-model.ts).
 */
import { FieldError } from "./page";

const CHOICES = {
  means: [
    ["equal", "Equal weight over the other factors' levels"],
    ["proportional", "In proportion to the observed frequencies"],
  ],
  contrasts: [
    ["reference", "Each arm versus the reference"],
    ["pairwise", "Every pair of arms"],
  ],
  multiplicity: [
    ["none", "None"],
    ["bonferroni", "Bonferroni"],
    ["holm", "Holm (step-down)"],
    ["hochberg", "Hochberg (step-up)"],
  ],
} as const;

const LEGENDS: Record<keyof typeof CHOICES, string> = {
  means: "Adjusted means: other categorical factors weighted",
  contrasts: "Treatment contrasts",
  multiplicity: "Multiplicity adjustment of the contrasts' p-values",
};

export function TreatmentEffectSection({
  initial,
  errors,
}: {
  initial: { means: string; contrasts: string; multiplicity: string };
  errors: Record<string, string>;
}) {
  return (
    <div className="mt-4 grid gap-3 md:grid-cols-3">
      {(Object.keys(CHOICES) as (keyof typeof CHOICES)[]).map((field) => (
        <fieldset key={field} aria-describedby={errors[field] ? `pm-${field}-error` : undefined}>
          <legend className="label">{LEGENDS[field]}</legend>
          <div className="space-y-1">
            {CHOICES[field].map(([value, words]) => (
              <label key={value} className="flex items-center gap-2 text-sm">
                <input
                  type="radio"
                  name={field}
                  value={value}
                  defaultChecked={(initial[field] || CHOICES[field][0][0]) === value}
                />
                {words}
              </label>
            ))}
          </div>
          <FieldError id={`pm-${field}-error`} message={errors[field]} />
        </fieldset>
      ))}
    </div>
  );
}
