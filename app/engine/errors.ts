/**
 * A problem with the model specification or the data that the user can fix.
 * The message is one plain line that names the problem (and the column or row involved).
 */
export class EngineError extends Error {
  constructor(message: string) {
    super(message);
    this.name = "EngineError";
  }
}
