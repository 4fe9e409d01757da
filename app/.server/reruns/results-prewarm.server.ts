/**
 * A completed rerun's results page made ready before its status says so: the stored result
 * parsed, the what-if's inputs and every figure answer of the rerun, for each kind of viewer
 * (with subjects, for roles that see them; by rank, for the others). All of it is kept in the
 * memory of the process that ran the rerun, in the caches the page and the figures route read
 * (rerun-rows.server.ts, what-if.server.ts, figure-answers.server.ts), so the first reader after
 * the rerun completes finds it made.
 *
 * Measured with `npm run bench:figures` (DEVELOPERS.md): without this, the first load of a
 * 10 000-subject rerun's page waited about 1 s for the parsed result and the what-if's refit
 * before its HTML, and each figure request made its data and compiled its specification first.
 *
 * Best effort: a problem here never fails the rerun; the page and the figures route make what is
 * missing when asked, as before.
 */
import type { FigureKey } from "~/engine/checks";
import { figureListOf } from "~/figures/registry";
import { FigureUnavailableError } from "~/figures/shared/source";
import type { PlannedModel } from "../plans/planned-model";
import { figureAnswer, figureTableOf } from "./figure-answers.server";
import { plansInfluentialExclusion } from "./planned-sensitivity";
import { rerunDocumentOf } from "./rerun-rows.server";
import type { RerunDocument } from "./compute-rerun";
import { keptWhatIfInputsOf } from "./what-if-inputs.server";

/**
 * Larger reruns are not made ready ahead: their figures are dense summaries made on the web
 * process's event loop, which for a million subjects would hold it for seconds at completion.
 */
export const PREWARM_UP_TO = 200_000;

/** Lets the server answer other requests between two pieces of work. */
const yieldToOthers = () => new Promise<void>((resolve) => setImmediate(resolve));

export interface CompletedRerun {
  id: string;
  kind: string;
  studyId: string;
  datasetVersionId: string;
  /** The stored result as it will be written, and its hash. */
  resultJson: string;
  resultSha256: string;
}

export async function prewarmResults(rerun: CompletedRerun, planned: Pick<PlannedModel, "sensitivity">) {
  try {
    const doc = rerunDocumentOf({
      id: rerun.id,
      resultJson: rerun.resultJson,
      resultSha256: rerun.resultSha256,
    });
    if (!doc || doc.rows.used > PREWARM_UP_TO) return;
    // a repeated-measures rerun's page lands with its own view; it makes its answers when asked
    if (doc.result.kind === "repeated") return;
    const stored = {
      id: rerun.id,
      resultSha256: rerun.resultSha256,
      datasetVersionId: rerun.datasetVersionId,
    };
    // the what-if is offered on a primary rerun to those who may start reruns (roles that see subjects)
    const whatIf =
      rerun.kind === "primary"
        ? keptWhatIfInputsOf(stored, doc, {
            prespecifiedExclusion: plansInfluentialExclusion(planned),
            withSubjectIds: true,
            canSave: true,
          })
        : null;
    // the registry's list of the rerun's figures (as the report and appendix draw): the page shows these
    for (const f of figureListOf(doc)) {
      for (const withSubjectIds of [true, false]) {
        await yieldToOthers();
        await figureOf(rerun, doc, f.figure, f.term, withSubjectIds);
      }
    }
    await whatIf;
  } catch (e) {
    console.warn(
      `The results page of rerun ${rerun.id} was not made ready ahead (it is made when first read): ${e instanceof Error ? e.message : String(e)}`,
    );
  }
}

async function figureOf(
  rerun: CompletedRerun,
  doc: RerunDocument,
  figure: FigureKey,
  term: string | undefined,
  withSubjectIds: boolean,
): Promise<void> {
  try {
    await figureAnswer(
      { rerunId: rerun.id, resultSha256: rerun.resultSha256, figure, term, withSubjectIds },
      doc,
      figureTableOf(figure, doc, rerun.datasetVersionId),
    );
  } catch (e) {
    // a figure that cannot be drawn says so when the page asks for it
    if (!(e instanceof FigureUnavailableError)) throw e;
  }
}
