/** Errors of the cluster executor that the command line shows as one message plus a hint, never a stack trace. */
export class ExecutorError extends Error {
  readonly hint?: string;
  constructor(message: string, hint?: string) {
    super(message);
    this.name = "ExecutorError";
    this.hint = hint;
  }
}
