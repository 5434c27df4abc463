/**
 * The command line's grammar as data: one table of options, one table of commands, and a small
 * hand-written parser over them. Adding a flag is one entry in OPTIONS plus its name in the
 * commands that accept it; adding a subcommand is one entry in the command table of main.ts.
 */

import { MAX_JOBS } from '../config';
import { closestName } from '../load/names';

export type OptionValue = string | number | boolean;

export interface OptionSpec {
  /** Long name without the dashes, e.g. "fail-on". */
  name: string;
  /** One-letter alias without the dash, e.g. "h". */
  short?: string;
  /** "flag" takes no value; "choice" takes one of `choices`; "integer" a whole number; "string" any text. */
  kind: 'flag' | 'choice' | 'integer' | 'string';
  choices?: readonly string[];
  /** Shown in the usage text, e.g. FILE or N. */
  valueName?: string;
  /** Smallest and largest value an "integer" option accepts; anything outside is a usage error. */
  range?: readonly [number, number];
  /** The value when the option is not given (flags default to false). */
  defaultValue?: OptionValue;
  description: string;
}

export interface CommandSpec {
  name: string;
  /** What follows the command name in the usage line, e.g. "[paths...]". */
  operands: string;
  summary: string;
  /** Names of the options (from OPTIONS) this command accepts, besides the global ones. */
  options: readonly string[];
  /** Lower and upper bound on the number of operands. */
  minOperands: number;
  maxOperands: number;
}

/** Every option the command line knows; commands pick theirs by name. */
export const OPTIONS: readonly OptionSpec[] = [
  { name: 'help', short: 'h', kind: 'flag', description: 'show this help and exit' },
  { name: 'version', short: 'V', kind: 'flag', description: 'print the version and exit' },
  {
    name: 'format',
    kind: 'choice',
    choices: ['text', 'json', 'sarif', 'markdown'],
    valueName: 'FORMAT',
    defaultValue: 'text',
    description:
      'output format: text (for people), json (version 1 contract), sarif (SARIF 2.1.0 for code scanning) or markdown (a pull-request comment)',
  },
  {
    name: 'values',
    kind: 'flag',
    description: 'include per-state value bounds and best actions (json format)',
  },
  {
    name: 'fail-on',
    kind: 'choice',
    choices: ['error', 'warning', 'info', 'never'],
    valueName: 'LEVEL',
    defaultValue: 'error',
    description: 'exit 1 when a finding has this severity or a higher one (with --baseline: a new finding)',
  },
  {
    name: 'baseline',
    kind: 'string',
    valueName: 'FILE',
    description: "compare with an earlier '--format json' output: report new and fixed findings and moved start values",
  },
  {
    name: 'report',
    kind: 'string',
    valueName: 'FILE.html',
    description:
      'also write a self-contained HTML report with plots of the return ranges, reach probabilities and state values',
  },
  {
    name: 'config',
    kind: 'string',
    valueName: 'FILE',
    description: 'the config file to use for every spec (default: the nearest episcope.config.json above each spec)',
  },
  { name: 'stdio', kind: 'flag', description: 'talk the Language Server Protocol over standard input and output' },
  {
    name: 'node-ipc',
    kind: 'flag',
    description: 'talk the Language Server Protocol over Node IPC (for clients that start it as a Node module)',
  },
  {
    name: 'socket',
    kind: 'integer',
    range: [1, 65535],
    valueName: 'PORT',
    description: 'talk the Language Server Protocol over a TCP socket on this port',
  },
  {
    name: 'clientProcessId',
    kind: 'integer',
    range: [1, 2 ** 31 - 1],
    valueName: 'PID',
    description: 'exit when this process (the editor) ends',
  },
  {
    name: 'no-exec',
    kind: 'flag',
    description: 'never run TypeScript model code: static checks only (for untrusted files)',
  },
  {
    name: 'run-model-code',
    kind: 'flag',
    description:
      'server: run TypeScript model code unless the client says the workspace is not trusted (default: only when it says trusted)',
  },
  // The same range as the config file's seed: the rollouts use it as a 32-bit unsigned number.
  {
    name: 'seed',
    kind: 'integer',
    range: [0, 2 ** 32 - 1],
    valueName: 'N',
    description: "seed of the Monte Carlo rollouts (default: the config's seed, else 1)",
  },
  {
    name: 'rollouts',
    kind: 'integer',
    // Every rollout's return, length and ending are kept in memory (13 bytes); ten million stay near 130 MB.
    range: [0, 10_000_000],
    valueName: 'N',
    description:
      'rollouts per spec: estimates for sampled TypeScript models (default 1000), and for exact models the return distribution under the optimal and the random policy',
  },
  {
    name: 'learn',
    kind: 'choice',
    choices: ['q-learning', 'monte-carlo', 'off'],
    valueName: 'METHOD',
    description:
      "how to learn action values from samples, for sampled models and exact ones with --rollouts (default: the config's learning.method, else q-learning)",
  },
  {
    name: 'learn-steps',
    kind: 'integer',
    valueName: 'N',
    description: "most training steps of learning (default: the config's learning.steps, else 200000)",
  },
  {
    name: 'learn-episodes',
    kind: 'integer',
    valueName: 'N',
    description: "most training episodes of learning (default: the config's learning.episodes, else 20000)",
  },
  {
    name: 'jobs',
    kind: 'integer',
    range: [1, MAX_JOBS],
    valueName: 'N',
    description:
      "sandbox child processes for a sampled model's rollouts and learning; the figures do not depend on it (default: the config's jobs, else the machine's available parallelism)",
  },
];

/** Options every command accepts. */
export const GLOBAL_OPTIONS: readonly string[] = ['help', 'version'];

export interface ParsedArgs {
  command?: string;
  operands: string[];
  options: Record<string, OptionValue>;
}

/** A mistake in the command line; the message is one line meant for the user. */
export class UsageError extends Error {}

const optionByName = new Map(OPTIONS.map((o) => [o.name, o]));
const optionByShort = new Map(OPTIONS.filter((o) => o.short).map((o) => [o.short as string, o]));

export function findOption(name: string): OptionSpec | undefined {
  return optionByName.get(name);
}

/**
 * Parses argv (without the node and script paths). The first operand names the command; options
 * may come before or after it. `--name=value` and `--name value` both work; `--` ends options.
 * Throws UsageError with a one-line message on any mistake.
 */
export function parseArgs(argv: readonly string[], commands: readonly CommandSpec[]): ParsedArgs {
  const result: ParsedArgs = { operands: [], options: {} };
  const seen: OptionSpec[] = [];
  let optionsEnded = false;

  for (let i = 0; i < argv.length; i++) {
    const arg = argv[i];
    if (optionsEnded || arg === '-' || !arg.startsWith('-')) {
      if (result.command === undefined) {
        if (!commands.some((c) => c.name === arg))
          throw new UsageError(
            `unknown command '${arg}'${didYouMean(
              arg,
              commands.map((c) => c.name),
            )}`,
          );
        result.command = arg;
      } else {
        result.operands.push(arg);
      }
      continue;
    }
    if (arg === '--') {
      optionsEnded = true;
      continue;
    }

    let option: OptionSpec | undefined;
    let inlineValue: string | undefined;
    if (arg.startsWith('--')) {
      const eq = arg.indexOf('=');
      const name = eq >= 0 ? arg.slice(2, eq) : arg.slice(2);
      inlineValue = eq >= 0 ? arg.slice(eq + 1) : undefined;
      option = optionByName.get(name);
      if (!option) throw new UsageError(`unknown option '--${name}'${didYouMean(name, optionByName.keys(), '--')}`);
    } else {
      if (arg.length !== 2) throw new UsageError(`unknown option '${arg}' (short options cannot be combined)`);
      option = optionByShort.get(arg.slice(1));
      if (!option) throw new UsageError(`unknown option '${arg}'`);
    }

    if (option.kind === 'flag') {
      if (inlineValue !== undefined) throw new UsageError(`option '--${option.name}' takes no value`);
      result.options[option.name] = true;
    } else {
      let raw = inlineValue;
      if (raw === undefined) {
        if (i + 1 >= argv.length)
          throw new UsageError(`option '--${option.name}' needs a value (${describeValue(option)})`);
        raw = argv[++i];
      }
      result.options[option.name] = convertValue(option, raw);
    }
    seen.push(option);
  }

  // Options are checked against the command only after it is known, since they may precede it.
  const command = commands.find((c) => c.name === result.command);
  for (const option of seen) {
    if (GLOBAL_OPTIONS.includes(option.name)) continue;
    if (!command) throw new UsageError(`option '--${option.name}' needs a command`);
    if (!command.options.includes(option.name)) {
      throw new UsageError(`option '--${option.name}' does not apply to '${command.name}'`);
    }
  }
  if (command && !result.options.help) {
    const n = result.operands.length;
    if (n < command.minOperands) throw new UsageError(`'${command.name}' needs ${command.operands}`);
    if (n > command.maxOperands) {
      throw new UsageError(
        `'${command.name}' takes at most ${command.maxOperands} operand${command.maxOperands === 1 ? '' : 's'}, got ${n}`,
      );
    }
  }
  if (command) {
    for (const name of command.options) {
      const option = optionByName.get(name);
      if (option && !(name in result.options))
        result.options[name] = option.defaultValue ?? (option.kind === 'flag' ? false : '');
    }
  }
  return result;
}

/** "; did you mean '--format'?" when one known name is close to the mistyped one, else ''. */
function didYouMean(typed: string, known: Iterable<string>, prefix = ''): string {
  const near = closestName(typed, known);
  return near === undefined ? '' : `; did you mean '${prefix}${near}'?`;
}

function convertValue(option: OptionSpec, raw: string): OptionValue {
  switch (option.kind) {
    case 'choice':
      if (!option.choices?.includes(raw)) {
        throw new UsageError(
          `option '--${option.name}' must be one of ${option.choices?.join(', ')}; got '${raw}'${didYouMean(raw, option.choices ?? [])}`,
        );
      }
      return raw;
    case 'integer': {
      if (!/^-?\d+$/.test(raw) || !Number.isSafeInteger(Number(raw))) {
        throw new UsageError(`option '--${option.name}' needs a whole number${rangeText(option)}; got '${raw}'`);
      }
      const value = Number(raw);
      if (option.range && (value < option.range[0] || value > option.range[1])) {
        throw new UsageError(`option '--${option.name}' needs a whole number${rangeText(option)}; got ${raw}`);
      }
      return value;
    }
    default:
      return raw;
  }
}

/** " from 0 to 4294967295" for an option with a range, else ''. */
function rangeText(option: OptionSpec): string {
  return option.range ? ` from ${option.range[0]} to ${option.range[1]}` : '';
}

function describeValue(option: OptionSpec): string {
  if (option.kind === 'choice') return `one of ${option.choices?.join(', ')}`;
  if (option.kind === 'integer') return `a whole number${rangeText(option)}`;
  return option.valueName ?? 'a value';
}

/** The usage line and option list of one command, or of the whole tool when `command` is absent. */
export function usageText(tool: string, commands: readonly CommandSpec[], command?: CommandSpec): string {
  const lines: string[] = [];
  if (command) {
    lines.push(
      `Usage: ${tool} ${command.name} ${command.operands}${command.options.length ? ' [options]' : ''}`.trimEnd(),
      '',
    );
    lines.push(command.summary, '');
    const names = [...command.options, ...GLOBAL_OPTIONS];
    lines.push('Options:', ...optionLines(names));
  } else {
    lines.push(`${tool}: static checks and exact value analysis of reinforcement-learning environment specs.`, '');
    lines.push(`Usage: ${tool} <command> [options]`, '');
    lines.push('Commands:');
    const width = Math.max(...commands.map((c) => `${c.name} ${c.operands}`.length));
    for (const c of commands) lines.push(`  ${`${c.name} ${c.operands}`.padEnd(width)}  ${c.summary}`);
    lines.push('', 'Global options:', ...optionLines(GLOBAL_OPTIONS), '');
    lines.push(`Run '${tool} <command> --help' for a command's options.`);
  }
  return lines.join('\n') + '\n';
}

function optionLines(names: readonly string[]): string[] {
  const rows = names.map((name) => {
    const o = optionByName.get(name);
    if (!o) throw new Error(`option table has no '${name}'`);
    const value = o.kind === 'flag' ? '' : ` ${o.choices ? o.choices.join('|') : (o.valueName ?? 'VALUE')}`;
    const left = `${o.short ? `-${o.short}, ` : '    '}--${o.name}${value}`;
    const right =
      o.defaultValue !== undefined && o.kind !== 'flag'
        ? `${o.description} (default: ${o.defaultValue})`
        : o.description;
    return [left, right] as const;
  });
  const width = Math.max(...rows.map(([left]) => left.length));
  return rows.map(([left, right]) => `  ${left.padEnd(width)}  ${right}`);
}
