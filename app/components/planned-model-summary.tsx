import { familyWithLink, familyWords } from "~/engine/family-names";
export interface PlannedModelView {
  id: string;
  key: string;
  title: string;
  datasetName: string;
  /** The population conditions in words ("all rows" without any). */
  population: string;
  /** Adjusted-means weighting, contrasts and multiplicity in words (models with a treatment). */
  analysis?: [string, string][];
  response: string;
  family: string;
  link: string;
  treatment: string | null;
  reference: string | null;
  covariates: string[];
  interactions: string[];
  weights: string | null;
  offset: string | null;
  id_: string | null;
  checks: { key: string; label: string; threshold: number; remedy: string; source: string }[];
  sensitivity: string[];
  /** Repeated-measures models: subject, visits and their order, covariance and fallbacks, df, REML or ML, primary visit, in words. */
  repeated?: [string, string][];
  /** Time-to-event models: status, strata, ties and the PH test time scale, in words. */
  survival?: [string, string][];
  /** Values the study report printed, which a rerun must reproduce, in words. */
  published?: string[];
}

const num = (x: number) => (Number.isInteger(x) ? String(x) : x.toPrecision(4).replace(/0+$/, ""));

/** A planned model as a reviewer reads it: what is fitted, on which data, with which checks. */
export function PlannedModelSummary({ m, actions }: { m: PlannedModelView; actions?: React.ReactNode }) {
  const facts: [string, string][] = [
    ["Dataset", m.datasetName],
    ["Population", m.population],
    ["Endpoint", m.response],
    [
      "Distribution and link",
      m.family === "cox"
        ? `${familyWords("cox")}: ${m.link}`
        : m.family === "repeated"
          ? `Repeated measures (MMRM): ${familyWithLink("gaussian", m.link)}, visits correlated within a subject`
          : familyWithLink(m.family, m.link),
    ],
    ["Treatment", m.treatment ? `${m.treatment} (reference ${m.reference ?? "first level"})` : "none"],
    ["Covariates", m.covariates.length ? m.covariates.join("; ") : "none"],
    ["Interactions", m.interactions.length ? m.interactions.join("; ") : "none"],
    // a repeated-measures model takes no weights or offset and names its subject below
    ...((m.family === "repeated"
      ? []
      : [
          ["Weights", m.weights ?? "none"],
          ["Offset", m.offset ?? "none"],
          ["Subject id", m.id_ ?? "none"],
        ]) satisfies [string, string][]),
    ...(m.analysis ?? []),
    ...(m.survival ?? []),
    ...(m.repeated ?? []),
  ];
  return (
    <article className="panel" aria-labelledby={`model-${m.id}`}>
      <header className="flex flex-wrap items-center justify-between gap-2 border-b border-rule px-4 py-2">
        <h3 id={`model-${m.id}`} className="text-base font-semibold">
          <span className="mr-2 font-mono text-sm text-ink-soft">{m.key}</span>
          {m.title}
        </h3>
        {actions}
      </header>
      <div className="grid gap-4 p-4 2xl:grid-cols-[minmax(0,22rem)_1fr]">
        <dl className="grid content-start grid-cols-[8rem_1fr] gap-x-3 gap-y-1 text-sm">
          {facts.map(([k, v]) => (
            <div key={k} className="contents">
              <dt className="font-semibold text-ink-soft">{k}</dt>
              <dd className="break-words">{v}</dd>
            </div>
          ))}
        </dl>
        <div className="min-w-0 space-y-3">
          <table className="data-table">
            <caption className="mb-1 text-left text-xs font-semibold uppercase tracking-wide text-ink-soft">
              Planned checks
            </caption>
            <thead>
              <tr>
                <th scope="col">Check</th>
                <th scope="col" className="text-right">
                  Threshold
                </th>
                <th scope="col">Planned remedy</th>
              </tr>
            </thead>
            <tbody>
              {m.checks.map((c) => (
                <tr key={c.key}>
                  <td>
                    {c.label}
                    <span className="block text-xs text-ink-soft">{c.source}</span>
                  </td>
                  <td className="num text-right">{num(c.threshold)}</td>
                  <td className="text-xs">{c.remedy}</td>
                </tr>
              ))}
              {m.checks.length === 0 ? (
                <tr>
                  <td colSpan={3} className="text-ink-soft">
                    No checks planned.
                  </td>
                </tr>
              ) : null}
            </tbody>
          </table>
          <div className="text-sm">
            <p className="label">Planned sensitivity analyses</p>
            {m.sensitivity.length ? (
              <ul className="list-disc pl-5">
                {m.sensitivity.map((s) => (
                  <li key={s}>{s}</li>
                ))}
              </ul>
            ) : (
              <p className="text-ink-soft">None planned.</p>
            )}
            {m.published?.length ? (
              <>
                <p className="label mt-3">Published values to reproduce</p>
                <ul className="list-disc pl-5">
                  {m.published.map((s) => (
                    <li key={s}>{s}</li>
                  ))}
                </ul>
              </>
            ) : null}
          </div>
        </div>
      </div>
    </article>
  );
}
