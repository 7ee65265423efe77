/** Input that fails validation: every problem with its field path (→ HTTP 400, CLI exit 2). */
export interface Problem {
  path: string;
  message: string;
}

export class InputError extends Error {
  override readonly name = 'InputError';
  constructor(readonly problems: Problem[]) {
    super(problems.map((p) => (p.path ? `${p.path}: ${p.message}` : p.message)).join('\n'));
  }
}

/** A well-formed request the domain cannot satisfy (→ HTTP 422). */
export class DomainError extends Error {
  override readonly name = 'DomainError';
  constructor(
    readonly code: string,
    message: string,
  ) {
    super(message);
  }
}
