/** Messages of the service's unit reader in words a researcher reads (used by every field and form). */

/** Dimensions as the unit reader names them (server/units formatDimension), in words with an example unit. */
const DIMENSION_WORDS: Record<string, string> = {
  dimensionless: 'a plain number (no unit)',
  length: 'a length (such as µm or nm)',
  time: 'a time (such as s or min)',
  '1/time': 'a rate (per time, such as 1/s)',
  'length^2/time': 'a diffusivity (area per time, such as µm²/s)',
  '1/length^3': 'a number per volume (such as 1/mL)',
  'amount/length^3': 'a concentration (such as mM)',
  'amount/time': 'an amount per time (such as mol/s)',
  'length^5/(time*amount)': 'a mobility (such as µm²/(s·mM))',
  'mass/length^3': 'a mass per volume (such as g/mL)',
  'mass/amount': 'a molar mass (such as g/mol)',
  mass: 'a mass (such as mg)',
  temperature: 'a temperature',
  'length^3': 'a volume (such as mL)',
};

/**
 * A unit reader's message in words a researcher reads: `expected length^2/time, got "0.3 um" (length)`
 * → `this needs a diffusivity (area per time, such as µm²/s); "0.3 um" is a length (such as µm or nm)`.
 * Other messages pass unchanged.
 */
export function problemWords(message: string): string {
  return message.replace(/expected ([a-z0-9^*/()]+), got (.*) \(([a-z0-9^*/()]+)\)$/, (all, want: string, got: string, is: string) =>
    DIMENSION_WORDS[want] ? `this needs ${DIMENSION_WORDS[want]}; ${got} is ${DIMENSION_WORDS[is] ?? is}` : all,
  );
}
