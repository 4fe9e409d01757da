/**
 * The words of the status labels, said once: a rerun's state and a check's outcome, each with
 * the status shape it is drawn with (components/status.tsx; never colour alone).
 */
export type Status = "within" | "finding" | "pending";

export interface StatusWord {
  status: Status;
  word: string;
}

/** A rerun's state. */
export const RERUN_STATUS = {
  queued: { status: "pending", word: "Queued" },
  running: { status: "pending", word: "Running" },
  completed: { status: "within", word: "Completed" },
  failed: { status: "finding", word: "Failed" },
} as const satisfies Record<string, StatusWord>;

/** A check's outcome against the plan. */
export const CHECK_OUTCOME = {
  within: { status: "within", word: "Within plan" },
  finding: { status: "finding", word: "Finding" },
  not_computed: { status: "pending", word: "Not computed" },
} as const satisfies Record<string, StatusWord>;
