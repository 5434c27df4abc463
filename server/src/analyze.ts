/**
 * The one analysis call behind every front (CLI, language server, library): text and config in, a
 * FileReport out. Pure: no LSP, no VS Code, no file system writes.
 *
 * The pipeline is a straight line: a loader (spec/json.ts, or the TypeScript loader with its
 * sandbox) returns a LoadedSpec; this file alone continues through compile, analyse, check and
 * suppress. Nothing downstream imports this file back.
 */
import { analyzeModel } from './analysis';
import { exactModelRollouts, samplingCost } from './analysis/rollouts';
import { DEFAULT_LEARNING, exactModelLearning } from './sandbox/learn';
import { DEFAULT_CONFIG, ruleThreshold, type ResolvedConfig } from './config';
import type { Finding, FindingInput } from './findings';
import type { CompiledModel } from './model/compiled';
import { compileSpec, type CompileResult } from './model/compile';
import type { AnalyzeOptions, FileReport, LoadedSpec } from './report';
import { episodeNeverEnds } from './rules/episode-never-ends';
import { RULES } from './rules/registry';
import type { IncompleteModel, Rule, RuleContext } from './rules/types';
import { parseJsonSpec } from './spec/json';
import { LineIndex } from './spec/lines';
import { emptySpec, type ParsedSpec } from './spec/types';
import { suppressReport } from './suppress';

export type { AnalyzeOptions, FileReport, LoadedSpec } from './report';
export { isSpecPath } from './spec/paths';

/**
 * Analyses a spec of either format; the fronts (CLI, language server) call this. Never rejects
 * for any input text: a failure of ours anywhere lands in `internalErrors` (the CLI exits 2).
 */
export async function analyzeFile(path: string, text: string, options: AnalyzeOptions = {}): Promise<FileReport> {
  let loaded: LoadedSpec;
  try {
    loaded = path.endsWith('.mdp.ts') ? await loadTypeScript(path, text, options) : loadJsonSpec(text);
  } catch (error) {
    loaded = failedLoad(path, text, `loading the spec failed: ${errorText(error)}`);
  }
  return analyzeLoaded(path, text, loaded, options);
}

/**
 * Loaded on first use: the TypeScript toolchain (ts-morph, esbuild) takes a second or more to
 * load, which JSON specs (and the language server's workers) should never pay for.
 */
async function loadTypeScript(path: string, text: string, options: AnalyzeOptions): Promise<LoadedSpec> {
  const { loadTypeScriptSpec } = await import('./sandbox/analyze-typescript');
  return loadTypeScriptSpec(path, text, options);
}

/** Loads a JSON spec (`*.mdp.json`). Never throws. */
export function loadJsonSpec(text: string): LoadedSpec {
  const parsed = parseJsonSpec(text);
  return { spec: parsed.spec, findings: parsed.findings, internalErrors: parsed.internalError ? [parsed.internalError] : [] };
}

/** Analyses a JSON spec (`*.mdp.json`). Never throws for any input text. */
export function analyzeJsonText(path: string, text: string, options: AnalyzeOptions = {}): FileReport {
  return analyzeLoaded(path, text, loadJsonSpec(text), options);
}

/**
 * Runs compilation, analysis and every enabled rule on an already parsed spec, with the loader's
 * findings merged in. Kept for callers that hold a ParsedSpec; the loaders return a LoadedSpec.
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
  return analyzeLoaded(path, text, { spec, findings: loaderFindings, enumerated: prebuiltModel, internalErrors: [] }, { ...options, config });
}

/** Compile, analyse, check and suppress a loaded spec. Never throws. */
export function analyzeLoaded(path: string, text: string, loaded: LoadedSpec, options: AnalyzeOptions = {}): FileReport {
  const config = options.config ?? DEFAULT_CONFIG;
  const lines = new LineIndex(text);
  const report: FileReport = { path, text, lines, spec: loaded.spec, findings: [], internalErrors: [...loaded.internalErrors] };
  if (report.internalErrors.length > 0) report.notAnalysed = report.internalErrors[0];
  const findings: Finding[] = [];
  for (const f of loaded.findings) {
    const severity = config.rules[f.rule];
    if (severity === 'off') continue;
    findings.push(severity ? { ...f, severity } : f);
  }

  const compiled: CompileResult = loaded.enumerated ?? compileSpec(loaded.spec);
  report.model = compiled.model;
  if (!compiled.model) report.notAnalysed ??= compiled.reason;
  if (compiled.internalError) report.internalErrors.push(compiled.internalError);

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
    try {
      const stepCap = ruleThreshold(config, episodeNeverEnds, 'stepCap');
      report.rollouts = exactModelRollouts(report.model, report.analysis, { episodes: config.rollouts, seed: config.seed, stepCap });
      const method = config.learning.method;
      if (method !== 'off') {
        const settings = { ...DEFAULT_LEARNING, ...config.learning, method, evaluationEpisodes: config.rollouts };
        Object.assign(report.rollouts, exactModelLearning(report.model, report.analysis.start.optimal, settings, { seed: config.seed, stepCap }));
      }
    } catch (error) {
      report.internalErrors.push(`the rollouts failed: ${errorText(error)}`);
    }
  }
  if (loaded.rollouts) report.rollouts = { ...report.rollouts, ...loaded.rollouts };
  if (report.rollouts) {
    for (const stats of [report.rollouts.random, report.rollouts.optimal, report.rollouts.learned]) {
      if (stats) stats.cost = samplingCost(stats, config.halfWidth);
    }
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
  try {
    suppressReport(report, config);
  } catch (error) {
    // The findings stay as they were: showing a suppressed finding beats hiding a real one.
    report.findings = findings;
    report.suppressed = undefined;
    report.internalErrors.push(`applying suppressions failed: ${errorText(error)}`);
  }
  if (loaded.cancelled || options.isCancelled?.()) report.cancelled = true;
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
    threshold: (name) => ruleThreshold(config, rule, name),
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

/** A LoadedSpec for a load that failed through a bug of ours: an empty spec and the reason. */
function failedLoad(path: string, text: string, reason: string): LoadedSpec {
  return { spec: emptySpec(path.endsWith('.mdp.ts') ? 'ts' : 'json', { start: 0, end: text.length }), findings: [], enumerated: { reason }, internalErrors: [reason] };
}

function errorText(error: unknown): string {
  return error instanceof Error ? error.message : String(error);
}
