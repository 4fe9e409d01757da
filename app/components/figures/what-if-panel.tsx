/** Inputs for the closed-form case-deletion what-if, computed on the server from the rerun. */
export interface WhatIfInputs {
  available: boolean;
  reason?: string;
}

/** Select flagged subjects and see the treatment estimate without them (placeholder). */
export function WhatIfPanel({ inputs }: { inputs: WhatIfInputs }) {
  return <div className="text-xs text-ink-soft">{inputs.available ? "" : inputs.reason}</div>;
}
