import type { FigureKey } from "~/engine/checks";

/**
 * One diagnostic figure of a rerun, drawn in the browser from data fetched from the figures
 * resource route, so the page paints before the charts. (Placeholder until the charts land.)
 */
export function RerunFigure({ studyId, rerunId, figure, term }: { studyId: string; rerunId: string; figure: FigureKey; term?: string }) {
  return (
    <div className="flex h-64 items-center justify-center border border-dashed border-rule text-xs text-ink-soft" data-figure={figure} data-term={term} data-src={`/studies/${studyId}/reruns/${rerunId}/figures/${figure}`}>
      Figure: {figure}
    </div>
  );
}
