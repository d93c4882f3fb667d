import { parseArgs } from 'node:util';
import { CliUsageError } from './cli-error';

export type OptionSpec = Record<string, { type: 'string' | 'boolean'; short?: string }>;
export type ParsedOptions = Record<string, string | boolean | undefined>;

/**
 * Strict option parsing over node:util parseArgs, with its errors rewritten to one short line that names the command.
 * Every command also accepts --help.
 */
export function parseOptions(command: string, argv: string[], spec: OptionSpec): ParsedOptions {
  try {
    const { values } = parseArgs({ args: argv, options: { ...spec, help: { type: 'boolean', short: 'h' } }, strict: true, allowPositionals: false });
    return values as ParsedOptions;
  } catch (error) {
    const e = error as { code?: string; message?: string };
    const quoted = /'(-[^' ]+)/.exec(e.message ?? '')?.[1] ?? '';
    if (e.code === 'ERR_PARSE_ARGS_UNKNOWN_OPTION') throw new CliUsageError(`unknown option ${quoted} for "cellwright ${command}" (see cellwright ${command} --help)`);
    if (e.code === 'ERR_PARSE_ARGS_INVALID_OPTION_VALUE') {
      const name = /'(--[a-z-]+)/.exec(e.message ?? '')?.[1] ?? quoted;
      throw new CliUsageError(spec[name.replace(/^--/, '')]?.type === 'boolean' ? `option ${name} takes no value` : `option ${name} needs a value`);
    }
    if (e.code === 'ERR_PARSE_ARGS_UNEXPECTED_POSITIONAL') {
      const arg = /'([^']*)'/.exec(e.message ?? '')?.[1] ?? '';
      throw new CliUsageError(`unexpected argument "${arg}" for "cellwright ${command}" (options take the form --name value)`);
    }
    throw new CliUsageError(e.message ?? String(error));
  }
}

export function stringOption(values: ParsedOptions, name: string): string | undefined {
  const v = values[name];
  if (v === undefined) return undefined;
  if (typeof v !== 'string' || v === '') throw new CliUsageError(`option --${name} needs a value`);
  return v;
}

export function requiredString(values: ParsedOptions, name: string, command: string): string {
  const v = stringOption(values, name);
  if (v === undefined) throw new CliUsageError(`"cellwright ${command}" needs --${name}`);
  return v;
}

export function intOption(values: ParsedOptions, name: string, range: { min: number; max?: number }): number | undefined {
  const text = stringOption(values, name);
  if (text === undefined) return undefined;
  const v = /^[+-]?\d+$/.test(text) ? Number(text) : Number.NaN;
  const maxOk = range.max === undefined || v <= range.max;
  if (!Number.isSafeInteger(v) || v < range.min || !maxOk) {
    const span = range.max === undefined ? `≥ ${range.min}` : `from ${range.min} to ${range.max}`;
    throw new CliUsageError(`--${name} must be an integer ${span}, got "${text}"`);
  }
  return v;
}

export function numberOption(values: ParsedOptions, name: string, range: { min: number; max: number }): number | undefined {
  const text = stringOption(values, name);
  if (text === undefined) return undefined;
  const v = Number(text);
  if (!/^[+-]?(\d+\.?\d*|\.\d+)(e[+-]?\d+)?$/i.test(text) || !Number.isFinite(v) || v < range.min || v > range.max) {
    throw new CliUsageError(`--${name} must be a number from ${range.min} to ${range.max}, got "${text}"`);
  }
  return v;
}

export function choiceOption<T extends string>(values: ParsedOptions, name: string, choices: readonly T[]): T | undefined {
  const text = stringOption(values, name);
  if (text === undefined) return undefined;
  if (!(choices as readonly string[]).includes(text)) throw new CliUsageError(`--${name} must be one of ${choices.join(', ')}, got "${text}"`);
  return text as T;
}

/** "1..8" → [1, 8]; a single "8" → [8, 8]. */
export function rangeOption(values: ParsedOptions, name: string, bounds: { min: number; max: number }): [number, number] | undefined {
  const text = stringOption(values, name);
  if (text === undefined) return undefined;
  const m = /^(\d+)(?:\.\.(\d+))?$/.exec(text);
  const lo = m ? Number(m[1]) : Number.NaN;
  const hi = m ? Number(m[2] ?? m[1]) : Number.NaN;
  if (!m || lo < bounds.min || hi > bounds.max || lo > hi) {
    throw new CliUsageError(`--${name} must be a range A..B with ${bounds.min} ≤ A ≤ B ≤ ${bounds.max}, got "${text}"`);
  }
  return [lo, hi];
}

export function listOption<T extends string>(values: ParsedOptions, name: string, choices: readonly T[]): T[] | undefined {
  const text = stringOption(values, name);
  if (text === undefined) return undefined;
  const items = text.split(',').map((s) => s.trim()).filter(Boolean);
  const unknown = items.find((s) => !(choices as readonly string[]).includes(s));
  if (unknown !== undefined || items.length === 0) throw new CliUsageError(`--${name} takes a comma-separated list of ${choices.join(', ')}, got "${text}"`);
  return [...new Set(items)] as T[];
}

export function intListOption(values: ParsedOptions, name: string, range: { min: number; max: number }): number[] | undefined {
  const text = stringOption(values, name);
  if (text === undefined) return undefined;
  const items = text.split(',').map((s) => s.trim());
  const nums = items.map(Number);
  if (items.some((s, i) => !/^\d+$/.test(s) || nums[i] < range.min || nums[i] > range.max)) {
    throw new CliUsageError(`--${name} takes comma-separated integers from ${range.min} to ${range.max}, got "${text}"`);
  }
  return [...new Set(nums)].sort((a, b) => a - b);
}
