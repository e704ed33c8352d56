// Typed failures. Each carries the exit code of the command-line contract.

export const EXIT = { ok: 0, internal: 1, input: 2, fit: 3, flagged: 4 } as const;

/** Bad usage or bad input: exit code 2. */
export class InputError extends Error {
  readonly exitCode = EXIT.input;
  constructor(message: string) {
    super(message);
    this.name = "InputError";
  }
}

/** The model could not be fitted: exit code 3. */
export class FitError extends Error {
  readonly exitCode = EXIT.fit;
  constructor(message: string) {
    super(message);
    this.name = "FitError";
  }
}
