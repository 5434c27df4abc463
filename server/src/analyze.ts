/**
 * The one analysis call behind every front (CLI, language server, library): text and config in, a
 * FileReport out. Pure: no LSP, no VS Code, no file system writes.
 *
 * The pipeline is a straight line: a loader (load/json.ts, or the TypeScript loader with its
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
import { MAX_DOCUMENT_LENGTH, MAX_NESTING_DEPTH, parseJsonSpec, type JsonReadMemory } from './load/json';
import { LineIndex } from './load/lines';
import { emptySpec, type ParsedSpec } from './load/types';
import { suppressReport } from './suppress';
import type { Analysis } from './analysis/types';
import { withSampleEvidence } from './model/empirical';
import { SEEN_FACT_RULES } from './rules/empirical-model';

export type { AnalyzeOptions, FileReport, LoadedSpec } from './report';
export { isSpecPath } from './load/paths';

/**
 * Analyses a spec of either format; the fronts (CLI, language server) call this. Never rejects
 * for any input text: a failure of ours anywhere lands in `internalErrors` (the CLI exits 2).
 */
export async function analyzeFile(path: string, text: string, options: AnalyzeOptions = {}): Promise<FileReport> {
  let loaded: LoadedSpec;
  try {
    loaded = path.endsWith('.mdp.ts')
      ? await loadTypeScript(path, text, options)
      : loadJsonSpec(text, options.readMemory);
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

/** Loads a JSON spec (`*.mdp.json`). Never throws. `memory`: see AnalyzeOptions.readMemory. */
export function loadJsonSpec(text: string, memory?: JsonReadMemory): LoadedSpec {
  const parsed = parseJsonSpec(text, memory);
  const loaded: LoadedSpec = {
    spec: parsed.spec,
    findings: parsed.findings,
    internalErrors: parsed.internalError ? [parsed.internalError] : [],
  };
  const unreadable = unreadableJson(text, parsed.findings);
  if (unreadable) loaded.unreadable = unreadable;
  return loaded;
}

/** The loader's wording of a JSON syntax error and of a document nested too deeply (load/json.ts). */
const SYNTAX_PREFIX = 'invalid JSON: ';
const NESTING_PREFIX = 'values are nested more than';

/**
 * Why a JSON document was not read as a spec: more than the size limit, not valid JSON (with the
 * first syntax error's place), or another loader error on a document of which nothing was read.
 */
function unreadableJson(text: string, findings: Finding[]): string | undefined {
  if (text.length > MAX_DOCUMENT_LENGTH) {
    return `the document is ${(text.length / 1024 / 1024).toFixed(1)} MB, more than the ${MAX_DOCUMENT_LENGTH / 1024 / 1024} MB Episcope reads from a JSON spec`;
  }
  const syntax = findings.filter((f) => f.rule === 'schema' && f.message.startsWith(SYNTAX_PREFIX));
  if (syntax.length > 0) {
    const first = syntax.reduce((a, b) => (b.span.start < a.span.start ? b : a));
    const at = new LineIndex(text).position(first.span.start);
    const where = `line ${at.line + 1}, column ${at.character + 1}: ${first.message.slice(SYNTAX_PREFIX.length)}`;
    return `the document is not valid JSON (${syntax.length === 1 ? `a syntax error at ${where}` : `${syntax.length} syntax errors, the first at ${where}`})`;
  }
  if (text.trim() === '') return 'the document is empty';
  const deep = findings.find((f) => f.rule === 'schema' && f.message.startsWith(NESTING_PREFIX));
  return deep
    ? `values are nested more than ${MAX_NESTING_DEPTH} levels deep, so the document was not read`
    : undefined;
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
  return analyzeLoaded(
    path,
    text,
    { spec, findings: loaderFindings, enumerated: prebuiltModel, internalErrors: [] },
    { ...options, config },
  );
}

/** Compile, analyse, check and suppress a loaded spec. Never throws. */
export function analyzeLoaded(
  path: string,
  text: string,
  loaded: LoadedSpec,
  options: AnalyzeOptions = {},
): FileReport {
  try {
    return runStages(path, text, loaded, options);
  } catch (error) {
    // Each stage guards itself; this catches a bug in the code between them, so no front ever gets a rejection.
    const reason = `the analysis of the spec failed: ${errorText(error)}`;
    const internalErrors = [...loaded.internalErrors, reason];
    const report: FileReport = {
      path,
      text,
      lines: new LineIndex(text),
      spec: loaded.spec,
      findings: [...loaded.findings],
      internalErrors,
      notAnalysed: internalErrors[0],
    };
    // What the model code printed is the user's to see even then.
    if (loaded.modelOutput) report.modelOutput = loaded.modelOutput;
    return report;
  }
}

function runStages(path: string, text: string, loaded: LoadedSpec, options: AnalyzeOptions): FileReport {
  const config = options.config ?? DEFAULT_CONFIG;
  const lines = new LineIndex(text);
  const report: FileReport = {
    path,
    text,
    lines,
    spec: loaded.spec,
    findings: [],
    internalErrors: [...loaded.internalErrors],
  };
  if (report.internalErrors.length > 0) report.notAnalysed = report.internalErrors[0];
  const findings: Finding[] = [];
  for (const f of loaded.findings) {
    const severity = config.rules[f.rule];
    if (severity === 'off') continue;
    findings.push(severity ? { ...f, severity } : f);
  }

  const compiled: CompileResult = loaded.enumerated ?? compileSpec(loaded.spec);
  report.model = compiled.model;
  if (!compiled.model) report.notAnalysed ??= notCompiledReason(loaded, compiled.reason);
  if (compiled.internalError) report.internalErrors.push(compiled.internalError);

  const enabled = RULES.filter((rule) => config.rules[rule.id] !== 'off');
  const analysisWanted = options.analysis === true || enabled.some((rule) => rule.needs === 'analysis');
  if (compiled.model && analysisWanted && !options.isCancelled?.()) {
    try {
      report.analysis = analyzeModel(compiled.model, {
        precision: config.precision,
        startFrom: options.startFrom,
        keepSolution: options.keepSolution,
      });
    } catch (error) {
      report.notAnalysed = `the analysis failed: ${errorText(error)}`;
      report.internalErrors.push(report.notAnalysed);
    }
  }
  if (report.model && report.analysis && config.rollouts > 0 && !options.isCancelled?.()) {
    try {
      const stepCap = ruleThreshold(config, episodeNeverEnds, 'stepCap');
      report.rollouts = exactModelRollouts(report.model, report.analysis, {
        episodes: config.rollouts,
        seed: config.seed,
        stepCap,
      });
      const method = config.learning.method;
      if (method !== 'off') {
        const settings = { ...DEFAULT_LEARNING, ...config.learning, method, evaluationEpisodes: config.rollouts };
        Object.assign(
          report.rollouts,
          exactModelLearning(report.model, report.analysis.start.optimal, settings, { seed: config.seed, stepCap }),
        );
      }
    } catch (error) {
      report.internalErrors.push(`the rollouts failed: ${errorText(error)}`);
    }
  }
  if (loaded.rollouts) report.rollouts = { ...report.rollouts, ...loaded.rollouts };
  if (loaded.modelOutput) report.modelOutput = loaded.modelOutput;
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
  if (loaded.empirical && !report.cancelled)
    checkEmpirical(loaded.empirical, enabled, report, config, findings, options);

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

/**
 * The empirical model of a sampled model goes through the same analysis and rules as an exact
 * model; each finding gets its sample evidence appended. Rules that conclude from what is missing
 * run only when the exploration tried every state it saw. Its figures stay off the fronts'
 * exact-value displays (report.model and report.analysis stay unset).
 */
function checkEmpirical(
  model: CompiledModel,
  enabled: Rule[],
  report: FileReport,
  config: ResolvedConfig,
  findings: Finding[],
  options: AnalyzeOptions,
): void {
  let analysis: Analysis | undefined;
  try {
    analysis = analyzeModel(model, { precision: config.precision });
  } catch (error) {
    report.internalErrors.push(`the analysis of the empirical model failed: ${errorText(error)}`);
  }
  report.empirical = { model, analysis };
  const complete = model.samples?.complete === true;
  for (const rule of enabled) {
    if (options.isCancelled?.()) {
      report.cancelled = true;
      return;
    }
    if (rule.needs === 'spec' || (rule.needs === 'analysis' && !analysis)) continue;
    if (!complete && !SEEN_FACT_RULES.has(rule.id)) continue;
    runRule(rule, report, config, findings, undefined, { model, analysis });
  }
}

function runRule(
  rule: Rule,
  report: FileReport,
  config: ResolvedConfig,
  out: Finding[],
  declaredPart?: { model: CompiledModel; incomplete: IncompleteModel },
  sampled?: { model: CompiledModel; analysis?: Analysis },
): void {
  const model = sampled?.model ?? declaredPart?.model ?? report.model;
  const ctx: RuleContext = {
    text: report.text,
    spec: report.spec,
    model,
    incomplete: declaredPart?.incomplete,
    analysis: sampled ? sampled.analysis : declaredPart ? undefined : report.analysis,
    config,
    threshold: (name) => ruleThreshold(config, rule, name),
    report(input: FindingInput): void {
      const severity = config.rules[rule.id] ?? input.severity ?? rule.defaultSeverity;
      if (severity === 'off') return;
      const evidenced = sampled ? withSampleEvidence(sampled.model, input) : input;
      out.push({ ...evidenced, rule: rule.id, severity });
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
  return {
    spec: emptySpec(path.endsWith('.mdp.ts') ? 'ts' : 'json', { start: 0, end: text.length }),
    findings: [],
    enumerated: { reason },
    internalErrors: [reason],
  };
}

/** Why there is no model: an unreadable document first, then what the part that was read lacks. */
function notCompiledReason(loaded: LoadedSpec, reason: string | undefined): string | undefined {
  if (!loaded.unreadable) return reason;
  const spec = loaded.spec;
  const partial = spec.states.length > 0 || spec.transitions.length > 0 || spec.discount !== undefined;
  return partial && reason ? `${loaded.unreadable}; of the part that was read: ${reason}` : loaded.unreadable;
}

function errorText(error: unknown): string {
  return error instanceof Error ? error.message : String(error);
}
