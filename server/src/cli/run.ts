/**
 * The `episcope` command line as a function: `runCli` is the whole program with its inputs and
 * outputs passed in, so tests run it in-process. main.ts runs it with the real process; other
 * modules import from here, never from main.ts, which would start the program when bundled.
 */
import { version as packageVersion } from '../../../package.json';
import { analyzeFile } from '../analyze';
import type { ResolvedConfig } from '../config';
import { RULES } from '../rules/registry';
import { SUPPRESSION_RULE } from '../suppress';
import { CONFIG_RULE } from '../config-file';
import { SEVERITY_ORDER, type Severity } from '../rules/types';
import { UsageError, parseArgs, usageText, type CommandSpec, type ParsedArgs } from './args';
import { explainRule, listRules, suggestRules, type DocumentedRule } from './explain';
import { PathError, collectSpecFiles, readSpecFile } from './files';
import { CheckGate, GateError } from './gate';
import { fileReportToJson, jsonOutput, type JsonFile } from './json-output';
import { chooseStyle, formatFileText, formatSummary } from './text-output';

export const TOOL_NAME = 'episcope';
export const VERSION: string = packageVersion;

/** Exit codes of the contract: 0 clean, 1 findings at or above --fail-on, 2 usage or internal error. */
export const EXIT_OK = 0;
export const EXIT_FINDINGS = 1;
export const EXIT_ERROR = 2;

export interface CliOutput {
  write(text: string): void;
  isTTY?: boolean;
}

export interface CliIo {
  stdout: CliOutput;
  stderr: CliOutput;
  /** The folder relative paths are resolved against and shown relative to. */
  cwd: string;
  env: Record<string, string | undefined>;
}

interface Command extends CommandSpec {
  run(args: ParsedArgs, io: CliIo): Promise<number>;
}

/** The subcommands; add one by adding an entry (its options go in OPTIONS of args.ts). */
const COMMANDS: readonly Command[] = [
  {
    name: 'check',
    operands: '[paths...]',
    summary: 'check spec files (*.mdp.json, *.mdp.ts) and folders of them; default: the current folder',
    options: [
      'format',
      'values',
      'fail-on',
      'baseline',
      'report',
      'config',
      'no-exec',
      'seed',
      'rollouts',
      'learn',
      'learn-steps',
      'learn-episodes',
      'jobs',
    ],
    minOperands: 0,
    maxOperands: Infinity,
    run: runCheck,
  },
  {
    name: 'explain',
    operands: '[RULE]',
    summary: "print a rule's documentation and thresholds; without RULE, list the rules",
    options: [],
    minOperands: 0,
    maxOperands: 1,
    run: runExplain,
  },
  {
    name: 'server',
    operands: '',
    summary: 'start the language server for any LSP client (--stdio, --node-ipc or --socket=PORT)',
    options: ['stdio', 'node-ipc', 'socket', 'clientProcessId', 'no-exec', 'run-model-code'],
    minOperands: 0,
    maxOperands: 0,
    run: runServer,
  },
];

/** Every rule `explain` knows: the registry's and the fronts' own (`config`, `suppression`), sorted by id. */
export function documentedRules(): DocumentedRule[] {
  return [...RULES, CONFIG_RULE, SUPPRESSION_RULE].sort((a, b) => a.id.localeCompare(b.id));
}

/** The help text of the tool, or of one command. */
export function usageFor(commandName?: string): string {
  const command = COMMANDS.find((c) => c.name === commandName);
  if (commandName !== undefined && !command) throw new Error(`no command '${commandName}'`);
  return usageText(TOOL_NAME, COMMANDS, command);
}

/** Runs the command line; resolves to the exit code. Never rejects. */
export async function runCli(argv: readonly string[], io: CliIo): Promise<number> {
  try {
    let args: ParsedArgs;
    try {
      args = parseArgs(argv, COMMANDS);
    } catch (error) {
      if (error instanceof UsageError) return usageError(io, error.message);
      throw error;
    }
    const command = COMMANDS.find((c) => c.name === args.command);
    if (args.options.version) {
      io.stdout.write(`${VERSION}\n`);
      return EXIT_OK;
    }
    if (args.options.help) {
      io.stdout.write(usageText(TOOL_NAME, COMMANDS, command));
      return EXIT_OK;
    }
    if (!command) {
      io.stderr.write(usageText(TOOL_NAME, COMMANDS));
      return EXIT_ERROR;
    }
    return await command.run(args, io);
  } catch (error) {
    if (error instanceof PathError || error instanceof GateError) {
      io.stderr.write(`${TOOL_NAME}: ${error.message}\n`);
      return EXIT_ERROR;
    }
    const message = error instanceof Error ? error.message : String(error);
    io.stderr.write(`${TOOL_NAME}: internal error: ${message.split('\n')[0]}\n`);
    return EXIT_ERROR;
  }
}

function usageError(io: CliIo, message: string): number {
  io.stderr.write(`${TOOL_NAME}: ${message} (see '${TOOL_NAME} --help')\n`);
  return EXIT_ERROR;
}

async function runCheck(args: ParsedArgs, io: CliIo): Promise<number> {
  const format = args.options.format as 'text' | 'json' | 'sarif' | 'markdown';
  const failOn = args.options['fail-on'] as Severity | 'never';
  const withValues = args.options.values === true;
  const operands = args.operands.length > 0 ? args.operands : ['.'];

  const files = await collectSpecFiles(operands, io.cwd);
  if (files.length === 0) {
    io.stderr.write(
      `${TOOL_NAME}: no spec files (*.mdp.json, *.mdp.ts) found in ${operands.map((o) => `'${o}'`).join(', ')}\n`,
    );
    return EXIT_ERROR;
  }

  const gate = CheckGate.open(
    {
      format,
      failOn,
      baseline: optionalString(args.options.baseline),
      report: optionalString(args.options.report),
      config: optionalString(args.options.config),
      operands,
      cwd: io.cwd,
      toolName: TOOL_NAME,
      toolVersion: VERSION,
      stderr: io.stderr,
    },
    files,
  );
  const style = chooseStyle(io.stdout.isTTY, io.env);
  const results: JsonFile[] = [];
  let internalError = false;
  for (const file of files) {
    const text = await readSpecFile(file);
    gate.started(file.display);
    const report = await analyzeFile(file.absolute, text, {
      config: withRolloutOptions(gate.configFor(file.absolute), args),
      analysis: true,
      exec: args.options['no-exec'] !== true,
    });
    // Only the serialised form is kept, so memory does not grow with the models of earlier files.
    const json = fileReportToJson(report, { values: withValues, displayPath: file.display });
    results.push(json);
    gate.finished(report, json);
    if (report.internalErrors.length > 0) internalError = true;
    if (format === 'text') io.stdout.write(formatFileText(json, style));
  }
  for (const json of gate.extraFiles()) {
    results.push(json);
    if (format === 'text') io.stdout.write(formatFileText(json, style));
  }

  const rendered = gate.render(results);
  if (rendered !== undefined) io.stdout.write(rendered);
  else if (format === 'json') io.stdout.write(`${JSON.stringify(jsonOutput(results), null, 2)}\n`);
  else io.stdout.write(formatSummary(results, style) + gate.baselineText(results));
  gate.writeReport();

  if (internalError) {
    io.stderr.write(`${TOOL_NAME}: internal errors occurred while checking (see the output); please report them\n`);
    return EXIT_ERROR;
  }
  return gate.exitCode(results) ?? (failsAt(results, failOn) ? EXIT_FINDINGS : EXIT_OK);
}

/** `--seed`, `--rollouts`, `--jobs` and the `--learn` options override the config file's values. */
function withRolloutOptions(config: ResolvedConfig, args: ParsedArgs): ResolvedConfig {
  const { seed, rollouts, learn, jobs } = args.options;
  const steps = args.options['learn-steps'];
  const episodes = args.options['learn-episodes'];
  return {
    ...config,
    seed: typeof seed === 'number' ? seed : config.seed,
    rollouts: typeof rollouts === 'number' ? rollouts : config.rollouts,
    jobs: typeof jobs === 'number' ? jobs : config.jobs,
    learning: {
      ...config.learning,
      method: learn === 'q-learning' || learn === 'monte-carlo' || learn === 'off' ? learn : config.learning.method,
      steps: typeof steps === 'number' ? steps : config.learning.steps,
      episodes: typeof episodes === 'number' ? episodes : config.learning.episodes,
    },
  };
}

function optionalString(value: unknown): string | undefined {
  return typeof value === 'string' && value !== '' ? value : undefined;
}

/** True when some finding is at or above the --fail-on level. */
export function failsAt(files: readonly JsonFile[], failOn: Severity | 'never'): boolean {
  if (failOn === 'never') return false;
  const threshold = SEVERITY_ORDER[failOn];
  return files.some((file) => file.findings.some((f) => SEVERITY_ORDER[f.severity] >= threshold));
}

/** Runs until the client ends the connection; the server then exits the process itself. */
async function runServer(args: ParsedArgs, io: CliIo): Promise<number> {
  if (!args.options.stdio && !args.options['node-ipc'] && !args.options.socket) {
    io.stderr.write(`${TOOL_NAME}: server needs a transport: --stdio, --node-ipc or --socket=PORT\n`);
    return EXIT_ERROR;
  }
  // Loaded only for this command, so that `check` and `explain` never load the language server.
  const { startServer } = await import('../lsp/server');
  startServer({ exec: args.options['no-exec'] !== true, runModelCode: args.options['run-model-code'] === true });
  return new Promise<number>(() => undefined);
}

async function runExplain(args: ParsedArgs, io: CliIo): Promise<number> {
  const id = args.operands[0];
  const rules = documentedRules();
  if (id === undefined) {
    io.stdout.write(listRules(rules));
    return EXIT_OK;
  }
  const rule = rules.find((r) => r.id === id);
  if (!rule) {
    const near = suggestRules(id, rules);
    const hint =
      near.length > 0
        ? `; did you mean ${near.map((n) => `'${n}'`).join(' or ')}?`
        : `; run '${TOOL_NAME} explain' for the list`;
    io.stderr.write(`${TOOL_NAME}: unknown rule '${id}'${hint}\n`);
    return EXIT_ERROR;
  }
  io.stdout.write(explainRule(rule));
  return EXIT_OK;
}
