import type { RepeatedReportPart } from "~/shared/repeated-report";
import { PreviewBlock } from "./appendix/preview-block";

/**
 * A repeated-measures (MMRM) rerun in a sponsor report: the contrasts at the primary visit and the
 * structure used, then the results tables in the appendix's words. No subject appears in any of it.
 */
export function RepeatedReportSections({ part }: { part: RepeatedReportPart }) {
  return (
    <>
      <section className="panel p-4" aria-labelledby="repeated-effect-h">
        <h2 id="repeated-effect-h" className="mb-2">
          Treatment effect at the primary visit
        </h2>
        {part.headline ? <p className="num text-sm">{part.headline}</p> : null}
        <p className="mt-2 text-sm">{part.structure}</p>
      </section>
      <section className="panel space-y-4 p-4 text-sm" aria-labelledby="repeated-tables-h">
        <h2 id="repeated-tables-h">Repeated-measures model</h2>
        {part.tables.map((b) => (
          <PreviewBlock key={b.key} b={b} images={{}} />
        ))}
      </section>
    </>
  );
}
