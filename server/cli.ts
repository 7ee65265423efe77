/**
 * The `brink` command line.
 *
 *   brink analyze <mixture.json> [--format json|text]
 *
 * Output goes to stdout; problems with the input go to stderr with exit
 * status 2 and name the field; no stack traces (set BRINK_DEBUG=1 to see one
 * for an internal error, which exits with status 1).
 */
import { readFileSync } from 'node:fs';
import { parseArgs } from 'node:util';
import { analyze, type AnalysisResult } from './engine/analyze.js';
import { EngineDomainError, EngineInputError } from './engine/types.js';
import { MixtureFileError, parseMixture } from './schema/mixture.js';

export interface Io {
  out: (text: string) => void;
  err: (text: string) => void;
}

const defaultIo: Io = {
  out: (t) => process.stdout.write(t),
  err: (t) => process.stderr.write(t),
};

const USAGE = `brink — experiment-design planner for catalytic mixtures

usage:
  brink analyze <mixture.json> [--format json|text]   linear stability of one sample
  brink help                                         this text

Values in the mixture file are SI numbers or strings with units ("0.25 um^2/s",
"50 mM", "1e-3 um^-3", "5 percent"); see seeds/examples/ and README.md.
`;

/** A problem the user can fix: printed without a stack trace, exit status 2. */
export class UsageError extends Error {
  override readonly name = 'UsageError';
}

function readJson(path: string): unknown {
  let text: string;
  try {
    text = readFileSync(path, 'utf8');
  } catch (e) {
    throw new UsageError(`cannot read ${path}: ${(e as NodeJS.ErrnoException).code ?? (e as Error).message}`);
  }
  try {
    return JSON.parse(text) as unknown;
  } catch (e) {
    throw new UsageError(`${path} is not valid JSON: ${(e as Error).message}`);
  }
}

const g = (x: number, digits = 3) => (x === 0 ? '0' : Math.abs(x) >= 1e4 || Math.abs(x) < 1e-2 ? x.toExponential(digits - 1) : x.toPrecision(digits));

function duration(t: number): string {
  if (t >= 86400) return `${g(t / 86400)} d`;
  if (t >= 3600) return `${g(t / 3600)} h`;
  if (t >= 60) return `${g(t / 60)} min`;
  return `${g(t)} s`;
}

function length(x: number): string {
  if (x >= 1e-3) return `${g(x * 1e3)} mm`;
  return `${g(x * 1e6)} µm`;
}

/** A short human summary of an analysis. */
export function formatText(r: AnalysisResult): string {
  const lines: string[] = [];
  const head = r.state === 'stable' ? `stable (slowest decay rate ${g(-r.growthRate)} 1/s)` : `${r.state}, growth time ${duration(r.growthTime!)}`;
  lines.push(`state:        ${head}`);
  const fm = r.fastestMode;
  const where = fm.index !== null ? `mode n = ${fm.index}, ` : '';
  const wl = fm.wavelength !== null ? `wavelength ${length(fm.wavelength)}` : 'longest wave (k → 0)';
  const per = fm.oscillationPeriod !== null ? `, period ${duration(fm.oscillationPeriod)}` : '';
  lines.push(`fastest mode: ${where}${wl}${per}`);
  if (r.composition.length > 0) {
    const parts = r.composition.map((c) => `${c.species} ${c.weight >= 0 ? '+' : ''}${g(c.weight, 2)}`);
    lines.push(`composition:  ${parts.join(', ')}  (same sign gathers together, opposite sign is pushed out)`);
  }
  const c = r.criteria;
  if (c.stationary) lines.push(`stationary:   Σ αμρ/D = ${g(c.stationary.value)} 1/s vs threshold ${g(c.stationary.threshold)} 1/s → ${c.stationary.met ? 'met' : 'not met'}`);
  if (c.oscillatory) lines.push(`oscillatory:  Σ αμρ = ${g(c.oscillatory.value)} m^2/s^2 vs threshold ${g(c.oscillatory.threshold)} m^2/s^2 → ${c.oscillatory.met ? 'met' : 'not met'}${c.oscillatory.sufficientOnly ? ' (sufficient only)' : ''}`);
  if (!c.stationary && c.determinant) lines.push(`determinant:  ${g(c.determinant.value)} (< 0 means a real eigenvalue has crossed at k1) → ${c.determinant.met ? 'met' : 'not met'}`);
  for (const f of r.checks.fuel) lines.push(`fuel life:    ${f.chemical} lasts about ${duration(f.lifetime)}`);
  for (const s of r.checks.sedimentation) lines.push(`gravity:      ${s.species} ${s.direction}, gravitational height ${length(s.gravitationalHeight)}`);
  if (r.warnings.length > 0) {
    lines.push('warnings:');
    for (const w of r.warnings) lines.push(`  - ${w.code}: ${w.message}`);
  }
  return lines.join('\n') + '\n';
}

function cmdAnalyze(args: string[], io: Io): number {
  const { values, positionals } = parseArgs({ args, allowPositionals: true, options: { format: { type: 'string', default: 'json' } } });
  if (positionals.length !== 1) throw new UsageError('usage: brink analyze <mixture.json> [--format json|text]');
  const format = values.format;
  if (format !== 'json' && format !== 'text') throw new UsageError(`--format: expected json or text, got "${format}"`);
  const mixture = parseMixture(readJson(positionals[0]!));
  const result = analyze(mixture);
  io.out(format === 'json' ? JSON.stringify(result, null, 2) + '\n' : formatText(result));
  return 0;
}

/**
 * Run the command line with the given arguments (without `node` and the script).
 * @returns the exit status
 */
export async function main(argv: string[], io: Io = defaultIo): Promise<number> {
  const [cmd, ...rest] = argv;
  try {
    switch (cmd) {
      case 'analyze':
        return cmdAnalyze(rest, io);
      case undefined:
      case 'help':
      case '--help':
      case '-h':
        io.out(USAGE);
        return cmd === undefined ? 2 : 0;
      default:
        throw new UsageError(`unknown command "${cmd}"\n\n${USAGE}`);
    }
  } catch (e) {
    if (e instanceof MixtureFileError) {
      io.err(`invalid mixture:\n${e.problems.map((p) => `  ${p}`).join('\n')}\n`);
      return 2;
    }
    if (e instanceof UsageError || e instanceof EngineInputError) {
      io.err(`${e.message}\n`);
      return 2;
    }
    if (e instanceof EngineDomainError) {
      io.err(`cannot analyse this mixture (${e.code}): ${e.message}\n`);
      return 2;
    }
    if (e instanceof Error && (e as NodeJS.ErrnoException).code === 'ERR_PARSE_ARGS_UNKNOWN_OPTION') {
      io.err(`${e.message}\n`);
      return 2;
    }
    io.err(`internal error: ${(e as Error).message ?? String(e)}\n`);
    if (process.env.BRINK_DEBUG) io.err(`${(e as Error).stack}\n`);
    return 1;
  }
}
