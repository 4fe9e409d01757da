/**
 * What the what-if panel needs to recompute the treatment contrast without chosen subjects in
 * the browser (closed-form case deletion, app/engine/case-deletion.ts): the full fit's
 * (X'WX)⁻¹, coefficients and residual sum of squares, the contrast vectors, and for each
 * candidate subject its row of √W X and weighted residual. Built on the server by
 * whatIfInputs (app/.server/reruns/what-if.server.ts). Plain JSON.
 */
import type { FullFit } from "~/engine/case-deletion";

export interface WhatIfCandidate {
  /** 1-based data row of the locked file (what a sensitivity rerun excludes by). */
  row: number;
  /** Subject id, or null when the viewer may not see subjects (then the rank names it). */
  subject: string | null;
  /** Rank by Cook's distance among the candidates, 1 = most influential. */
  rank: number;
  cooks: number;
  leverage: number;
  deletionResidual: number;
  /** Labels of the influence checks that flagged the subject. */
  flaggedBy: string[];
  /** Row of √W X (design row scaled by √w). */
  x: number[];
  /** √w·(y − ŷ). */
  residual: number;
}

export interface WhatIfContrast {
  /** "LEVEL vs REFERENCE". */
  label: string;
  /** Contrast vector over the coefficients. */
  l: number[];
}

export type WhatIfInputs =
  | { available: false; reason: string; caution?: string }
  | {
      available: true;
      caution: string;
      full: FullFit;
      coefficientNames: string[];
      contrasts: WhatIfContrast[];
      /** Subjects any influence check flagged, most influential first (at most 30). */
      candidates: WhatIfCandidate[];
      /** How many subjects the influence checks flagged in all (candidates keeps the top 30). */
      flaggedCount: number;
      /** Did the plan name exclusion of influential subjects as a sensitivity analysis? */
      prespecifiedExclusion: boolean;
      /** The rows that planned exclusion leaves out: those the Cook's distance check flagged. */
      prespecifiedRows: number[];
      /** May the viewer turn the selection into a sensitivity rerun? */
      canSave: boolean;
      /** Plain-words caveats (weights held fixed, model-based errors, ...). */
      notes: string[];
    };
