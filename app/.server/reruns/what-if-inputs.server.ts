/**
 * The what-if inputs the results page ships: those the compute thread stored with the result
 * (derive-page.ts), shaped for the viewer, or else built in a compute thread from the locked
 * version's stored columns and kept per result hash (what-if.server.ts).
 */
import type { WhatIfInputs } from "~/components/figures/what-if-inputs";
import { RESULTS_CAUTION } from "~/engine";
import { runWhatIfTask } from "../compute/pool.server";
import { lockedColumnsFile } from "../datasets/catalog.server";
import { storedRerunDocument } from "./rerun-rows.server";
import { keptOrBuilt, whatIfFor, type WhatIfOptions } from "./what-if.server";

export function keptWhatIfInputsOf(
  rerun: { id: string; resultSha256: string | null; datasetVersionId: string },
  stored: WhatIfInputs | null,
  options: WhatIfOptions = {},
): Promise<WhatIfInputs> {
  if (stored) return Promise.resolve(whatIfFor(stored, options));
  return keptOrBuilt(rerun, options, async () => {
    const doc = await storedRerunDocument(rerun);
    if (!doc)
      return {
        available: false,
        reason: "The what-if opens when the rerun has completed.",
        caution: RESULTS_CAUTION,
      };
    return runWhatIfTask({
      doc,
      columnsFile: (await lockedColumnsFile(rerun.datasetVersionId)).file,
      options,
    });
  });
}
