/**
 * The what-if inputs the results page ships, built in a compute thread from the locked
 * version's stored columns and kept per result hash (what-if.server.ts).
 */
import type { WhatIfInputs } from "~/components/figures/what-if-inputs";
import { runWhatIfTask } from "../compute/pool.server";
import { lockedColumnsFile } from "../datasets/catalog.server";
import type { RerunDocument } from "./compute-rerun";
import { keptOrBuilt, type WhatIfOptions } from "./what-if.server";

export function keptWhatIfInputsOf(
  rerun: { id: string; resultSha256: string | null; datasetVersionId: string },
  doc: RerunDocument,
  options: WhatIfOptions = {},
): Promise<WhatIfInputs> {
  return keptOrBuilt(rerun, options, async () =>
    runWhatIfTask({ doc, columnsFile: (await lockedColumnsFile(rerun.datasetVersionId)).file, options }),
  );
}
