/** A problem with an analysis request (bad option values, an unusable decay study): shown as a one-line message. */
export class AnalysisInputError extends Error {
  constructor(message: string) {
    super(message);
    this.name = "AnalysisInputError";
  }
}
