import { useMemo, useState } from "react";
import { Form } from "react-router";
import { Caution } from "~/components/caution";
import { StatusLabel } from "~/components/status";
import { contrastOf, deleteCases, type ContrastEstimate } from "~/engine/case-deletion";
import { formatP } from "~/engine/checks";
import type { WhatIfCandidate, WhatIfInputs } from "./what-if-inputs";

export type { WhatIfCandidate, WhatIfContrast, WhatIfInputs } from "./what-if-inputs";

const num = (v: number, digits = 2) => (Number.isFinite(v) ? v.toFixed(digits) : "—");
const signed = (v: number, digits = 2) =>
  Number.isFinite(v) ? `${v > 0 ? "+" : v < 0 ? "−" : "±"}${Math.abs(v).toFixed(digits)}` : "—";

function who(c: WhatIfCandidate): string {
  return c.subject ?? `Subject ranked ${c.rank}`;
}

/**
 * The influence what-if: tick flagged subjects and see at once how each treatment contrast
 * against the reference arm (estimate, SE, 95% CI, p) changes without them. Computed here in
 * the browser in closed form (case deletion through the Woodbury identity, app/engine/case-deletion.ts);
 * nothing is saved unless the selection is kept as a sensitivity rerun.
 */
export function WhatIfPanel({ inputs }: { inputs: WhatIfInputs }) {
  const [selected, setSelected] = useState<ReadonlySet<number>>(new Set());

  const computed = useMemo(() => {
    if (!inputs.available) return null;
    const full = deleteCases(inputs.full, []);
    const chosen = inputs.candidates.filter((c) => selected.has(c.row));
    const after = deleteCases(inputs.full, chosen);
    if (!full.ok) return null;
    return {
      n: inputs.full.n,
      chosen,
      after,
      rows: inputs.contrasts.map((c) => ({
        label: c.label,
        before: contrastOf(full, c.l),
        after: after.ok ? contrastOf(after, c.l) : null,
      })),
    };
  }, [inputs, selected]);

  if (!inputs.available) {
    return (
      <section className="panel p-4" aria-label="What-if for influential subjects">
        <h3 className="text-base font-semibold">What-if for influential subjects</h3>
        <p className="mt-1 text-sm text-ink-soft">{inputs.reason}</p>
      </section>
    );
  }

  const toggle = (row: number) =>
    setSelected((s) => {
      const next = new Set(s);
      if (next.has(row)) next.delete(row);
      else next.add(row);
      return next;
    });
  const rowsField = [...selected].sort((a, b) => a - b).join(",");
  // planned exclusion leaves out exactly the subjects the Cook's distance check flagged
  const planned = inputs.prespecifiedRows;
  const isPlanned =
    inputs.prespecifiedExclusion &&
    planned.length > 0 &&
    planned.length === selected.size &&
    planned.every((r) => selected.has(r));
  const plannedSelectable =
    planned.length > 0 && planned.every((r) => inputs.candidates.some((c) => c.row === r));

  return (
    <section className="panel p-4" aria-label="What-if for influential subjects">
      <div className="flex flex-wrap items-baseline justify-between gap-2">
        <h3 className="text-base font-semibold">What-if for influential subjects</h3>
        <p className="text-xs text-ink-soft">
          Exact closed-form case deletion (Cook and Weisberg 1982, section 3.6); no refit, nothing saved.
        </p>
      </div>
      <p className="mt-1 text-sm text-ink-soft">
        Tick subjects flagged by the influence checks to see the treatment contrast without them.
        {inputs.flaggedCount > inputs.candidates.length
          ? ` The ${inputs.candidates.length} with the largest Cook's distance of ${inputs.flaggedCount} flagged are listed.`
          : ""}
      </p>

      <div className="mt-3 grid gap-4 xl:grid-cols-[minmax(0,5fr)_minmax(0,6fr)]">
        <div className="max-h-96 overflow-y-auto border border-rule">
          <table className="data-table">
            <thead className="sticky top-0 bg-sheet">
              <tr>
                <th scope="col">
                  <span className="sr-only">Leave out</span>
                </th>
                <th scope="col">Subject</th>
                <th scope="col" className="text-right">
                  Cook's D
                </th>
                <th scope="col" className="text-right">
                  Leverage
                </th>
                <th scope="col" className="text-right">
                  Deletion resid.
                </th>
                <th scope="col">Flagged by</th>
              </tr>
            </thead>
            <tbody>
              {inputs.candidates.map((c) => {
                const id = `whatif-${c.row}`;
                return (
                  <tr key={c.row} className={selected.has(c.row) ? "bg-paper" : ""}>
                    <td>
                      <input
                        id={id}
                        type="checkbox"
                        checked={selected.has(c.row)}
                        onChange={() => toggle(c.row)}
                        className="accent-accent"
                      />
                    </td>
                    <td>
                      <label htmlFor={id} className="cursor-pointer">
                        {who(c)}
                        <span className="block text-xs text-ink-soft">data row {c.row}</span>
                      </label>
                    </td>
                    <td className="num text-right">{num(c.cooks, 3)}</td>
                    <td className="num text-right">{num(c.leverage, 3)}</td>
                    <td className="num text-right">{num(c.deletionResidual, 2)}</td>
                    <td className="text-xs text-ink-soft">{c.flaggedBy.join(", ")}</td>
                  </tr>
                );
              })}
            </tbody>
          </table>
        </div>

        <div>
          {computed && !computed.after.ok ? (
            <p className="mb-2 text-sm" role="alert">
              <StatusLabel status="finding" word="Not estimable" /> {computed.after.reason}.
            </p>
          ) : null}
          <table className="data-table" aria-live="polite">
            <thead>
              <tr>
                <th scope="col">Contrast</th>
                <th scope="col" className="text-right">
                  All {computed?.n ?? ""} subjects
                </th>
                <th scope="col" className="text-right">
                  Without {selected.size} ticked
                </th>
                <th scope="col" className="text-right">
                  Change
                </th>
              </tr>
            </thead>
            <tbody>
              {computed?.rows.map((r) => (
                <ContrastRows
                  key={r.label}
                  label={r.label}
                  before={r.before}
                  after={selected.size > 0 ? r.after : r.before}
                />
              ))}
            </tbody>
          </table>
          {inputs.notes.length > 0 ? (
            <ul className="mt-2 list-disc pl-5 text-xs text-ink-soft">
              {inputs.notes.map((n) => (
                <li key={n}>{n}</li>
              ))}
            </ul>
          ) : null}

          {inputs.canSave ? (
            <Form method="post" className="mt-3 flex flex-wrap items-center gap-3">
              <input type="hidden" name="intent" value="whatif-save" />
              <input type="hidden" name="rows" value={rowsField} />
              <button type="submit" className="btn" disabled={selected.size === 0 || !computed?.after.ok}>
                Keep as a sensitivity rerun
              </button>
              {isPlanned ? (
                <span className="inline-flex items-center gap-1.5 text-xs">
                  <StatusLabel status="within" word="Pre-specified" />
                  <span className="text-ink-soft">
                    these are the subjects the plan's exclusion of influential subjects names.
                  </span>
                </span>
              ) : (
                <span className="inline-flex items-center gap-1.5 text-xs">
                  <StatusLabel status="pending" word="Not pre-specified" />
                  <span className="text-ink-soft">
                    {inputs.prespecifiedExclusion
                      ? "the plan's exclusion leaves out exactly the subjects the Cook's distance check flagged; this selection differs, so the rerun is labelled so."
                      : "the plan does not name exclusion of influential subjects; the rerun is labelled so."}
                  </span>
                </span>
              )}
              {inputs.prespecifiedExclusion && plannedSelectable && !isPlanned ? (
                <button type="button" className="btn-quiet" onClick={() => setSelected(new Set(planned))}>
                  Tick the planned exclusion ({planned.length})
                </button>
              ) : null}
            </Form>
          ) : null}
          <Caution className="mt-3" />
        </div>
      </div>
    </section>
  );
}

function ContrastRows({
  label,
  before,
  after,
}: {
  label: string;
  before: ContrastEstimate;
  after: ContrastEstimate | null;
}) {
  const cell = (e: ContrastEstimate | null) =>
    e ? (
      <>
        {num(e.estimate)}
        <span className="block text-xs text-ink-soft">
          ({num(e.lower)} to {num(e.upper)})
        </span>
      </>
    ) : (
      "—"
    );
  return (
    <>
      <tr>
        <th
          scope="row"
          rowSpan={3}
          className="align-top text-left text-sm font-medium normal-case tracking-normal text-ink"
        >
          {label}
        </th>
        <td className="num text-right">{cell(before)}</td>
        <td className="num text-right font-semibold">{cell(after)}</td>
        <td className="num text-right">{after ? signed(after.estimate - before.estimate) : "—"}</td>
      </tr>
      <tr>
        <td className="num text-right text-xs">SE {num(before.se, 3)}</td>
        <td className="num text-right text-xs">SE {after ? num(after.se, 3) : "—"}</td>
        <td className="num text-right text-xs">{after ? signed(after.se - before.se, 3) : "—"}</td>
      </tr>
      <tr>
        <td className="num text-right text-xs">p {formatP(before.p)}</td>
        <td className="num text-right text-xs">p {after ? formatP(after.p) : "—"}</td>
        <td className="num text-right text-xs">df {after ? after.df : "—"}</td>
      </tr>
    </>
  );
}
