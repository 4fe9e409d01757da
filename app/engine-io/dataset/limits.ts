/**
 * Limits every dataset reader enforces, so that a file cannot exhaust the server's memory
 * before it is refused. The web server takes them from its configuration (DATASET_MAX_COLUMNS,
 * DATASET_MAX_HEADER_BYTES); the headless command from the same environment variables.
 */
export interface ReadLimits {
  /** Most columns a dataset may have. */
  maxColumns: number;
  /** Largest header line of a CSV file, in bytes. */
  maxHeaderBytes: number;
  /** Longest column name, in characters. */
  maxNameChars: number;
  /** Longest cell, in characters. */
  maxCellChars: number;
  /** Deepest nesting of arrays and objects in a Dataset-JSON file (the standard needs 4). */
  maxJsonDepth: number;
}

export const DEFAULT_LIMITS: ReadLimits = {
  maxColumns: 2000,
  maxHeaderBytes: 1_048_576,
  maxNameChars: 200,
  maxCellChars: 10_000,
  maxJsonDepth: 32,
};

function positive(value: string | undefined, fallback: number): number {
  const n = Number(value);
  return value !== undefined && Number.isInteger(n) && n > 0 ? n : fallback;
}

/** The limits as set in the environment (for the headless command; the server validates its own). */
export function limitsFromEnv(env: Record<string, string | undefined>): ReadLimits {
  return {
    ...DEFAULT_LIMITS,
    maxColumns: positive(env.DATASET_MAX_COLUMNS, DEFAULT_LIMITS.maxColumns),
    maxHeaderBytes: positive(env.DATASET_MAX_HEADER_BYTES, DEFAULT_LIMITS.maxHeaderBytes),
  };
}
