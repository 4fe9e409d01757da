/** Version of the statistics engine; stored with every rerun so a result can be traced to the code that made it. */
export const ENGINE_VERSION = "1.2.1";

/** The caution every results screen, export and API answer carries. */
export const RESULTS_CAUTION =
  "Results support, but do not replace, qualified statistical and medical review.";
