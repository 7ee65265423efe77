import { LIMITS } from '../schema/limits.js';

/** Input that fails validation: every problem with its field path (→ HTTP 400, CLI exit 2). */
export interface Problem {
  path: string;
  message: string;
}

export class InputError extends Error {
  override readonly name = 'InputError';
  /**
   * @param more problems found but not listed (a reader stops collecting after LIMITS.problems);
   * the message lists at most LIMITS.problems and counts the rest
   */
  constructor(
    readonly problems: Problem[],
    readonly more = 0,
  ) {
    const lines = problems.slice(0, LIMITS.problems).map((p) => (p.path ? `${p.path}: ${p.message}` : p.message));
    const rest = more + Math.max(0, problems.length - LIMITS.problems);
    if (rest > 0) lines.push(`… and ${rest} more problem${rest === 1 ? '' : 's'}`);
    super(lines.join('\n'));
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
