import { CrowntallyError } from '../errors.js';

/**
 * A small, strict argument parser: `--name value`, `--name=value` and
 * boolean `--flag`. Unknown options are errors (a typo must not be ignored
 * in a script that feeds a survey into an asset system).
 */
export interface ArgSpec {
  /** Options taking a value. */
  values: readonly string[];
  /** Options that are flags. */
  flags: readonly string[];
}

export interface ParsedArgs {
  positional: string[];
  values: Map<string, string>;
  flags: Set<string>;
}

export function parseArgs(argv: readonly string[], spec: ArgSpec): ParsedArgs {
  const out: ParsedArgs = { positional: [], values: new Map(), flags: new Set() };
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i]!;
    if (a === '--') { out.positional.push(...argv.slice(i + 1)); break; }
    if (!a.startsWith('--') || a === '-') { out.positional.push(a); continue; }
    const eq = a.indexOf('=');
    const name = a.slice(2, eq < 0 ? undefined : eq);
    if (spec.flags.includes(name)) {
      if (eq >= 0) throw new CrowntallyError('BAD_OPTIONS', `--${name} takes no value`);
      out.flags.add(name);
    } else if (spec.values.includes(name)) {
      const v = eq >= 0 ? a.slice(eq + 1) : argv[++i];
      if (v === undefined || (eq < 0 && v.startsWith('--'))) throw new CrowntallyError('BAD_OPTIONS', `--${name} needs a value`);
      out.values.set(name, v);
    } else {
      throw new CrowntallyError('BAD_OPTIONS', `unknown option --${name}; see crowntally --help`);
    }
  }
  return out;
}

/** A number option in a range, with the unit in the message. */
export function numberArg(p: ParsedArgs, name: string, min: number, max: number, unit: string): number | undefined {
  const s = p.values.get(name);
  if (s === undefined) return undefined;
  const v = Number(s);
  if (!Number.isFinite(v) || v < min || v > max) {
    throw new CrowntallyError('BAD_OPTIONS', `--${name} must be a number from ${min} to ${max} ${unit} (got "${s}")`);
  }
  return v;
}
