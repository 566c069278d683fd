/** Errors the CLI shows as one clear message (plus a hint), never as a stack trace. */
export class UserError extends Error {
  readonly hint?: string;
  constructor(message: string, hint?: string) {
    super(message);
    this.name = "UserError";
    this.hint = hint;
  }
}
