import type { Status } from "../status";

/** A rerun's status as the results page shows it: a status shape and a word. */
export const RUN_STATUS = {
  queued: { status: "pending", word: "Queued" },
  running: { status: "pending", word: "Running" },
  completed: { status: "within", word: "Completed" },
  failed: { status: "finding", word: "Failed" },
} as const satisfies Record<string, { status: Status; word: string }>;

export type RunStatus = keyof typeof RUN_STATUS;
