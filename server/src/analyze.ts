/**
 * The one analysis call behind every front (CLI, language server, library):
 * text and config in, a FileReport out. Pure: no LSP, no VS Code, no file system writes.
 */
import { analyzeModel } from './analysis';
import { DEFAULT_STEP_CAP, exactModelRollouts, type RolloutReport } from './analysis/rollouts';
import type { Analysis } from './analysis/types';
import { DEFAULT_CONFIG, type ResolvedConfig } from './config';
import type { CompiledModel } from './model/compiled';
import { compileSpec, type CompileResult } from './model/compile';
import { RULES } from './rules/registry';
import type { Finding, FindingInput, IncompleteModel, Rule, RuleContext } from './rules/types';
import { parseJsonSpec } from './spec/json';
import { LineIndex } from './spec/lines';
import type { ParsedSpec } from './spec/types';
import { suppressReport, type SuppressedFinding } from './suppress';

export interface AnalyzeOptions {
  config?: ResolvedConfig;
  /** Whether TypeScript model code may run (false: static checks only, as with `--no-exec`). */
  exec?: boolean;
  /** Checked between phases; when it returns true the call stops early and the report says so. */
  isCancelled?: () => boolean;
  /**
   * Compute the analysis (value bounds, reach probabilities) even when no enabled rule needs it,
   * because the front shows it (the CLI's return ranges, hovers). Default: only when a rule needs it.
   */
  analysis?: boolean;
}

export interface FileReport {
  path: string;
  text: string;
  lines: LineIndex;
  spec: ParsedSpec;
  /** Sorted by position; severities resolved through the config. */
  findings: Finding[];
  model?: CompiledModel;
  analysis?: Analysis;
  /** Why there is no model or analysis, when there is none. */
  notAnalysed?: string;
  /** Rules whose check failed unexpectedly (a bug of ours), with the error text. */
  internalErrors: string[];
  cancelled?: boolean;
  /** Findings hidden by a config `ignore` entry or an `episcope-ignore` comment (see suppress.ts). */
  suppressed?: SuppressedFinding[];
  /**
   * Monte Carlo figures (analysis/rollouts.ts): for sampled TypeScript models always, for exactly
   * analysed models when config `rollouts` > 0 (optimal and random policy).
   */
  rollouts?: RolloutReport;
}

/** True for the file names Episcope analyses (`*.mdp.json`, `*.mdp.ts`). */
export function isSpecPath(path: string): boolean {
  return path.endsWith('.mdp.json') || path.endsWith('.mdp.ts');
}

/**
 * Analyses a spec of either format; the fronts (CLI, language server) call this. Never rejects
 * for any input text.
 */
export async function analyzeFile(path: string, text: string, options: AnalyzeOptions = {}): Promise<FileReport> {
  if (path.endsWith('.mdp.ts')) {
    // Loaded on first use: the TypeScript toolchain (ts-morph, esbuild) takes a second or more to
    // load, which JSON specs (and the language server's workers) should never pay for.
    const { analyzeTypeScriptText } = await import('./sandbox/analyze-typescript');
    return analyzeTypeScriptText(path, text, options);
  }
  return analyzeJsonText(path, text, options);
}

/** Analyses a JSON spec (`*.mdp.json`). Never throws for any input text. */
export function analyzeJsonText(path: string, text: string, options: AnalyzeOptions = {}): FileReport {
  const config = options.config ?? DEFAULT_CONFIG;
  const parsed = parseJsonSpec(text);
  return analyzeParsed(path, text, parsed.spec, parsed.findings, config, options);
}

/**
 * Runs compilation, analysis and every enabled rule on an already parsed spec. Loader findings
 * (schema problems and the like) are merged in. Exported for the TypeScript-spec loader.
 */
export function analyzeParsed(
  path: string,
  text: string,
  spec: ParsedSpec,
  loaderFindings: Finding[],
  config: ResolvedConfig,
  options: AnalyzeOptions = {},
  prebuiltModel?: CompileResult,
): FileReport {
  const lines = new LineIndex(text);
  const report: FileReport = { path, text, lines, spec, findings: [], internalErrors: [] };
  const findings: Finding[] = [];
  for (const f of loaderFindings) {
    const severity = config.rules[f.rule];
    if (severity === 'off') continue;
    findings.push(severity ? { ...f, severity } : f);
  }

  const compiled = prebuiltModel ?? compileSpec(spec);
  report.model = compiled.model;
  if (!compiled.model) report.notAnalysed = compiled.reason;

  const enabled = RULES.filter((rule) => config.rules[rule.id] !== 'off');
  const analysisWanted = options.analysis === true || enabled.some((rule) => rule.needs === 'analysis');
  if (compiled.model && analysisWanted && !options.isCancelled?.()) {
    try {
      report.analysis = analyzeModel(compiled.model, { precision: config.precision });
    } catch (error) {
      report.notAnalysed = `the analysis failed: ${errorText(error)}`;
      report.internalErrors.push(report.notAnalysed);
    }
  }
  if (report.model && report.analysis && config.rollouts > 0 && !options.isCancelled?.()) {
    const stepCap = config.thresholds['episode-never-ends.stepCap'] ?? DEFAULT_STEP_CAP;
    report.rollouts = exactModelRollouts(report.model, report.analysis, { episodes: config.rollouts, seed: config.seed, stepCap });
  }

  for (const rule of enabled) {
    if (options.isCancelled?.()) {
      report.cancelled = true;
      break;
    }
    if (rule.needs === 'graph' && !report.model) {
      // A spec that does not compile still gets the checks that need only its graph.
      if (compiled.declared && compiled.reason) {
        const incomplete: IncompleteModel = { reason: compiled.reason, brokenStates: compiled.declared.brokenStates };
        runRule(rule, report, config, findings, { model: compiled.declared.model, incomplete });
      }
      continue;
    }
    if (rule.needs === 'model' && !report.model) continue;
    if (rule.needs === 'analysis' && !report.analysis) continue;
    runRule(rule, report, config, findings);
  }

  findings.sort((a, b) => a.span.start - b.span.start || a.span.end - b.span.end || a.rule.localeCompare(b.rule));
  report.findings = findings;
  suppressReport(report, config);
  return report;
}

function runRule(
  rule: Rule,
  report: FileReport,
  config: ResolvedConfig,
  out: Finding[],
  declaredPart?: { model: CompiledModel; incomplete: IncompleteModel },
): void {
  const ctx: RuleContext = {
    text: report.text,
    spec: report.spec,
    model: declaredPart?.model ?? report.model,
    incomplete: declaredPart?.incomplete,
    analysis: declaredPart ? undefined : report.analysis,
    config,
    threshold(name: string): number {
      const configured = config.thresholds[`${rule.id}.${name}`];
      if (configured !== undefined) return configured;
      const spec = rule.thresholds?.[name];
      if (!spec) throw new Error(`rule ${rule.id} has no threshold named ${name}`);
      return spec.default;
    },
    report(input: FindingInput): void {
      const severity = config.rules[rule.id] ?? input.severity ?? rule.defaultSeverity;
      if (severity === 'off') return;
      out.push({ ...input, rule: rule.id, severity });
    },
  };
  try {
    rule.check(ctx);
  } catch (error) {
    report.internalErrors.push(`rule ${rule.id} failed: ${errorText(error)}`);
  }
}

function errorText(error: unknown): string {
  return error instanceof Error ? error.message : String(error);
}
