/** A versioned write based on a version that is no longer current (→ HTTP 409 with the current one). */
export class StaleVersionError extends Error {
  override readonly name = 'StaleVersionError';
  constructor(
    message: string,
    readonly current: unknown,
  ) {
    super(message);
  }
}
