import { CONTRAST_SET_NAMES } from "~/engine/multiplicity";
import { fmt, fmtCi, fmtP } from "~/shared/format";
import type { RepeatedView } from "./repeated-view";
import { TableScroll } from "../table-scroll";
import { MULTIPLICITY_WORDS } from "../treatment-effect";

/** The treatment and treatment-by-visit F tests, with the denominator df method named. */
function FTestTable({ view }: { view: RepeatedView }) {
  return (
    <TableScroll label="F tests of treatment">
      <table className="data-table">
        <caption className="mb-1 text-left text-xs text-ink-soft">
          F tests of the treatment terms; denominator degrees of freedom by the {view.dfMethod} method.
        </caption>
        <thead>
          <tr>
            <th scope="col">Test</th>
            <th scope="col">Hypothesis</th>
            <th scope="col" className="text-right">
              F
            </th>
            <th scope="col" className="text-right">
              Numerator df
            </th>
            <th scope="col" className="text-right">
              Denominator df
            </th>
            <th scope="col" className="text-right">
              p
            </th>
          </tr>
        </thead>
        <tbody>
          {view.tests.map((t) => (
            <tr key={t.name}>
              <th scope="row" className="text-left font-normal whitespace-nowrap">
                {t.name}
              </th>
              <td className="min-w-[16rem] text-xs">{t.hypothesis}</td>
              <td className="num text-right">{fmt(t.statistic, 2)}</td>
              <td className="num text-right">{t.numeratorDf}</td>
              <td className="num text-right">{fmt(t.denominatorDf, 1)}</td>
              <td className="num text-right">{fmtP(t.p)}</td>
            </tr>
          ))}
        </tbody>
      </table>
    </TableScroll>
  );
}

/** The plan's treatment contrasts at every visit, the primary visit marked. */
function VisitContrastsTable({ view }: { view: RepeatedView }) {
  const adjusted = view.treatmentEffect.multiplicity !== "none";
  return (
    <TableScroll label="Treatment contrasts by visit">
      <table className="data-table">
        <caption className="mb-1 text-left text-xs text-ink-soft">
          Differences in adjusted means, {CONTRAST_SET_NAMES[view.treatmentEffect.contrastSet]}, at each
          visit; t on {view.dfMethod} degrees of freedom with 95% confidence intervals. The primary visit is
          marked.
        </caption>
        <thead>
          <tr>
            <th scope="col">Visit</th>
            <th scope="col">Contrast</th>
            <th scope="col" className="text-right">
              Difference
            </th>
            <th scope="col" className="text-right">
              SE
            </th>
            <th scope="col" className="text-right">
              df
            </th>
            <th scope="col" className="text-right">
              95% CI
            </th>
            <th scope="col" className="text-right">
              t
            </th>
            <th scope="col" className="text-right">
              p
            </th>
            {adjusted ? (
              <th scope="col" className="text-right">
                p, {MULTIPLICITY_WORDS[view.treatmentEffect.multiplicity]}
              </th>
            ) : null}
          </tr>
        </thead>
        <tbody>
          {view.visitContrasts.map((c) => {
            const primary = c.visit === view.primaryVisit;
            return (
              <tr key={`${c.visit}|${c.label}`} className={primary ? "bg-paper" : undefined}>
                <td className="whitespace-nowrap">
                  {c.visit}
                  {primary ? <span className="text-xs font-semibold text-accent"> · primary</span> : null}
                </td>
                <th scope="row" className="text-left font-normal whitespace-nowrap">
                  {c.label}
                </th>
                <td className={`num text-right ${primary ? "font-semibold" : ""}`}>{fmt(c.estimate)}</td>
                <td className="num text-right">{fmt(c.se)}</td>
                <td className="num text-right">{fmt(c.df, 1)}</td>
                <td className="num text-right whitespace-nowrap">{fmtCi(c.lower, c.upper)}</td>
                <td className="num text-right">{fmt(c.statistic, 2)}</td>
                <td className="num text-right">{fmtP(c.p)}</td>
                {adjusted ? <td className="num text-right">{fmtP(c.pAdjusted)}</td> : null}
              </tr>
            );
          })}
        </tbody>
      </table>
    </TableScroll>
  );
}

/** The treatment effect of a repeated-measures rerun: F tests and the contrasts per visit. */
export function RepeatedEffectSection({ view }: { view: RepeatedView }) {
  if (view.tests.length === 0 && view.visitContrasts.length === 0) return null;
  const m = view.treatmentEffect.multiplicity;
  return (
    <section className="panel p-4" aria-labelledby="effect-h">
      <h2 id="effect-h" className="mb-2">
        Treatment effect by visit
      </h2>
      {view.tests.length > 0 ? <FTestTable view={view} /> : null}
      {view.testNotes.length > 0 ? (
        <ul className="mt-2 list-disc pl-5 text-xs text-ink-soft">
          {view.testNotes.map((n) => (
            <li key={n}>{n}</li>
          ))}
        </ul>
      ) : null}
      {view.visitContrasts.length > 0 ? (
        <div className="mt-4">
          <VisitContrastsTable view={view} />
        </div>
      ) : null}
      <p className="num mt-2 text-sm">
        Primary visit: {view.primaryVisit}. Contrasts: {CONTRAST_SET_NAMES[view.treatmentEffect.contrastSet]}.
        Multiplicity adjustment:{" "}
        {m === "none"
          ? "none (p-values unadjusted)"
          : `${MULTIPLICITY_WORDS[m]}, within the comparisons at each visit (adjusted p beside the unadjusted)`}
        .
      </p>
    </section>
  );
}
