/**
 * The `--format json` output, version 1 (the contract in DESIGN.md, "CLI contract"). Pure:
 * FileReport in, plain object out, so that the baseline comparison can read the same shape back.
 *
 * Contract fields are never renamed or retyped. Fields marked "additive" go beyond the contract;
 * readers must ignore fields they do not know.
 */
import type { FileReport } from '../analyze';
import type { LearningSummary, Percentiles, RolloutStats, StartDecision } from '../analysis/rollout-stats';
import type { Analysis, Interval, ReachAtStart } from '../analysis/types';
import type { CompiledModel } from '../model/compiled';
import { TERMINAL_OF_CODE } from '../model/compiled';
import type { Finding, Severity } from '../rules/types';
import type { Span } from '../load/types';
import type { LineIndex } from '../load/lines';
import {
  jsonLower,
  jsonPoint,
  jsonProbability,
  jsonShare,
  jsonUpper,
  roundNearest,
  type JsonNumber,
  type JsonProbability,
} from './numbers';

export const JSON_OUTPUT_VERSION = 1;

export interface JsonInterval {
  lower: JsonNumber;
  upper: JsonNumber;
}

/** Exact reach probabilities; "undetermined" when a capped solve left one wider than the precision. */
export interface JsonReach {
  goal: JsonProbability;
  failure: JsonProbability;
  none: JsonProbability;
  /** Additive: probability of ending in a neutral terminal. */
  neutral: JsonProbability;
}

/** A 1-based range; endColumn is the column just after the last character (as in SARIF). */
export interface JsonRange {
  line: number;
  column: number;
  endLine: number;
  endColumn: number;
}

export interface JsonTraceStep {
  state: string;
  /** Absent on a trace's last state when no action follows it. */
  action?: string;
  /** Additive: where the step is written, when it is written anywhere. */
  line?: number;
  column?: number;
}

export interface JsonFinding extends JsonRange {
  rule: string;
  severity: Severity;
  message: string;
  /** Always present; empty when the finding has no trace. */
  trace: JsonTraceStep[];
  /** Additive: related locations (e.g. each transition of a loop), when there are any. */
  related?: Array<JsonRange & { message: string }>;
  /** Additive: set when the finding was made on the empirical model of a sampled model. */
  fromSamples?: { samples: number; pairs: number; fewest: number; survives: boolean };
}

export interface JsonStateValues {
  optimal: JsonInterval;
  random: JsonInterval;
  worst: JsonInterval;
  /** Actions that attain the optimal value; empty on terminals. */
  best: string[];
  /** Additive: a readable rendering, for generated states of TypeScript models. */
  label?: string;
  /** Additive: the terminal kind, on terminal states. */
  terminal?: 'goal' | 'failure' | 'neutral';
  /** Additive: whether some policy reaches the state from the start. */
  reachable: boolean;
  /** Additive: bounds on Q*(s, a) per action offered in the state. */
  q: Record<string, JsonInterval>;
  /** Additive: the best achievable probability of ending in a goal from this state. */
  maxGoalReach: JsonProbability;
}

export interface JsonAnalysis {
  states: number;
  /** The number of (state, action) pairs that have outcomes. */
  transitions: number;
  exact: boolean;
  start: {
    optimal: JsonInterval;
    worst: JsonInterval;
    random: JsonInterval;
    reach: { optimal: JsonReach; random: JsonReach };
    /** Additive: the best achievable probability of ending in a goal. */
    maxGoalReach: JsonProbability;
    /** Additive: expected number of steps until the episode ends ("inf" when it may never end). */
    expectedLength: { optimal: JsonNumber; random: JsonNumber };
  };
  /** Additive: the number of outcomes (state, action, next state) in the model. */
  outcomes: number;
  /** Additive: the objective, discount and (when set) horizon the values are computed under. */
  objective: 'maximize' | 'minimize';
  discount: number;
  horizon?: number;
  /** Additive: the largest width of any reported finite bound or point figure. */
  precision: JsonNumber;
  /** Additive: the work behind the figures: value-iteration sweeps and sparse linear solves (absent in baselines written before it). */
  solver?: { sweeps: number; solves: number; krylovIterations?: number };
  /** Additive: each reward term's expected discounted total under the optimal policy, and its share. */
  terms: Array<{ term: string; value: JsonNumber; share: number }>;
  /** Present with --values: per state id. */
  values?: Record<string, JsonStateValues>;
}

export interface JsonFile {
  path: string;
  findings: JsonFinding[];
  /** Absent when the spec could not be compiled. */
  analysis?: JsonAnalysis;
  /** Additive: why there is no analysis, when there is none. */
  notAnalysed?: string;
  /** Additive: failures of Episcope itself while checking this file (a bug of ours; exit code 2). */
  internalErrors?: string[];
  /**
   * Additive: Monte Carlo figures per policy ("random", "optimal", "learned"): for sampled
   * TypeScript models always (random policy; "learned" and `learning` unless learning is off), for
   * exactly analysed models with `--rollouts N` (all three).
   */
  rollouts?: Partial<Record<'random' | 'optimal' | 'learned', JsonRollouts>> & { learning?: JsonLearning };
  /** Additive: what TypeScript model code printed to stdout and stderr in the sandbox (cut to about 4000 characters). */
  modelOutput?: string;
}

/** Additive: what learning spent and learned (sandbox/learn.ts); a Q of an action never tried, and any figure not known, is null. */
export interface JsonLearning extends Pick<
  LearningSummary,
  'method' | 'visits' | 'epsilon' | 'budget' | 'spent' | 'distinctKeys' | 'learningStates' | 'unlearnedSteps' | 'path'
> {
  states: Array<{
    key: string;
    step?: number;
    visits: number;
    actions: Array<{ action: string; q: number | null; visits: number }>;
  }>;
  decision?: {
    key: string;
    best: { action: string; mean: number | null; standardDeviation: number | null };
    runnerUp: { action: string; mean: number | null; standardDeviation: number | null };
    episodes: number;
    z: JsonNumber | null;
    decided: boolean;
    /** "inf" when the two actions' means are equal: no number of episodes separates them. */
    moreEpisodes: JsonNumber | null;
  };
  noDecision?: string;
  exact?: { optimal: { lower: JsonNumber; upper: JsonNumber }; gap: number | null; withinInterval: boolean };
}

/**
 * Seeded rollouts of one policy (analysis/rollouts.ts), in the analysis's own shape less the
 * policy (the key says it) and the step total; returns are discounted sums of rewards. Figures
 * are finite numbers rounded to nearest.
 */
export type JsonRollouts = Omit<RolloutStats, 'policy' | 'totalSteps' | 'cost'> & {
  /** Additive: training-free cost of a narrower interval: n = (1.96 sd / halfWidth)^2 episodes; null when not known. */
  cost?: { halfWidth: number; defaultHalfWidth: boolean; episodesNeeded: number | null; moreEpisodes: number | null };
};

export type JsonPercentiles = Percentiles;

export interface JsonOutput {
  version: 1;
  files: JsonFile[];
  /** Additive: finding counts over all files. */
  summary: { files: number; error: number; warning: number; info: number };
}

export interface JsonOptions {
  /** Include per-state values (`--values`). */
  values?: boolean;
  /** The path as shown to the user (relative to the working folder); defaults to report.path. */
  displayPath?: string;
}

/** Serialises one file's report. */
export function fileReportToJson(report: FileReport, options: JsonOptions = {}): JsonFile {
  const file: JsonFile = {
    path: options.displayPath ?? report.path,
    findings: report.findings.map((f) => findingToJson(f, report.lines)),
  };
  if (report.analysis && report.model)
    file.analysis = analysisToJson(report.analysis, report.model, options.values ?? false);
  if (!report.analysis && report.notAnalysed) file.notAnalysed = report.notAnalysed;
  if (report.internalErrors.length > 0) file.internalErrors = [...report.internalErrors];
  if (report.modelOutput) file.modelOutput = report.modelOutput;
  if (report.rollouts) {
    file.rollouts = {};
    if (report.rollouts.random) file.rollouts.random = rolloutsToJson(report.rollouts.random);
    if (report.rollouts.optimal) file.rollouts.optimal = rolloutsToJson(report.rollouts.optimal);
    if (report.rollouts.learned) file.rollouts.learned = rolloutsToJson(report.rollouts.learned);
    if (report.rollouts.learning) file.rollouts.learning = learningToJson(report.rollouts.learning);
  }
  return file;
}

export function rolloutsToJson(stats: RolloutStats): JsonRollouts {
  const r = stats.return;
  const percentiles = (p: RolloutStats['return']['percentiles']): JsonPercentiles => ({
    p5: roundNearest(p.p5),
    p25: roundNearest(p.p25),
    p50: roundNearest(p.p50),
    p75: roundNearest(p.p75),
    p95: roundNearest(p.p95),
  });
  const histogram = (h: RolloutStats['return']['histogram']) => ({
    lower: roundNearest(h.lower),
    upper: roundNearest(h.upper),
    counts: h.counts,
  });
  return {
    episodes: stats.episodes,
    seed: stats.seed,
    stepCap: stats.stepCap,
    return: {
      mean: roundNearest(r.mean),
      standardError: roundNearest(r.standardError),
      ci95: { lower: roundNearest(r.ci95.lower), upper: roundNearest(r.ci95.upper) },
      min: roundNearest(r.min),
      max: roundNearest(r.max),
      percentiles: percentiles(r.percentiles),
      histogram: histogram(r.histogram),
    },
    length: {
      mean: roundNearest(stats.length.mean),
      min: stats.length.min,
      max: stats.length.max,
      percentiles: percentiles(stats.length.percentiles),
      histogram: histogram(stats.length.histogram),
    },
    reach: {
      goal: jsonShare(stats.reach.goal),
      failure: jsonShare(stats.reach.failure),
      neutral: jsonShare(stats.reach.neutral),
      none: jsonShare(stats.reach.none),
    },
    stepCapped: stats.stepCapped,
    ...(stats.cost
      ? {
          cost: {
            halfWidth: roundNearest(stats.cost.halfWidth),
            defaultHalfWidth: stats.cost.defaultHalfWidth,
            episodesNeeded: known(stats.cost.episodesNeeded),
            moreEpisodes: known(stats.cost.moreEpisodes),
          },
        }
      : {}),
  };
}

/** A finite figure rounded to nearest, else null (not known). */
function known(x: number): number | null {
  return Number.isFinite(x) ? roundNearest(x) : null;
}

/** A figure that may be infinite: "inf"/"-inf", NaN as null. */
function knownOrInfinite(x: number): JsonNumber | null {
  if (Number.isNaN(x)) return null;
  if (x === Infinity) return 'inf';
  if (x === -Infinity) return '-inf';
  return roundNearest(x);
}

export function learningToJson(learning: LearningSummary): JsonLearning {
  const out: JsonLearning = {
    method: learning.method,
    epsilon: learning.epsilon,
    budget: { ...learning.budget },
    spent: { ...learning.spent },
    distinctKeys: learning.distinctKeys,
    learningStates: learning.learningStates,
    unlearnedSteps: learning.unlearnedSteps,
    path: { keys: [...learning.path.keys], actions: [...learning.path.actions], truncated: learning.path.truncated },
    states: learning.states.map((s) => ({
      key: s.key,
      ...(s.step !== undefined ? { step: s.step } : {}),
      visits: s.visits,
      actions: s.actions.map((a) => ({ action: a.action, q: known(a.q), visits: a.visits })),
    })),
  };
  if (learning.visits) out.visits = learning.visits;
  const d = learning.decision;
  if (d) {
    const side = (x: StartDecision['best']) => ({
      action: x.action,
      mean: known(x.mean),
      standardDeviation: known(x.standardDeviation),
    });
    out.decision = {
      key: d.key,
      best: side(d.best),
      runnerUp: side(d.runnerUp),
      episodes: d.episodes,
      z: knownOrInfinite(d.z),
      decided: d.decided,
      moreEpisodes: knownOrInfinite(d.moreEpisodes),
    };
  }
  if (learning.noDecision) out.noDecision = learning.noDecision;
  if (learning.exact) {
    out.exact = {
      optimal: { lower: jsonLower(learning.exact.optimal.lower), upper: jsonUpper(learning.exact.optimal.upper) },
      gap: known(learning.exact.gap),
      withinInterval: learning.exact.withinInterval,
    };
  }
  return out;
}

/** Wraps serialised files into the top-level object, with the additive summary. */
export function jsonOutput(files: JsonFile[]): JsonOutput {
  const summary = { files: files.length, error: 0, warning: 0, info: 0 };
  for (const file of files) for (const f of file.findings) summary[f.severity]++;
  return { version: JSON_OUTPUT_VERSION, files, summary };
}

export function rangeToJson(span: Span, lines: LineIndex): JsonRange {
  const start = lines.position(span.start);
  const end = lines.position(Math.max(span.start, span.end));
  return { line: start.line + 1, column: start.character + 1, endLine: end.line + 1, endColumn: end.character + 1 };
}

export function findingToJson(finding: Finding, lines: LineIndex): JsonFinding {
  const out: JsonFinding = {
    rule: finding.rule,
    severity: finding.severity,
    message: finding.message,
    ...rangeToJson(finding.span, lines),
    trace: (finding.trace ?? []).map((step) => {
      const s: JsonTraceStep = { state: step.state };
      if (step.action !== undefined) s.action = step.action;
      if (step.span) {
        const p = lines.position(step.span.start);
        s.line = p.line + 1;
        s.column = p.character + 1;
      }
      return s;
    }),
  };
  if (finding.related && finding.related.length > 0) {
    out.related = finding.related.map((r) => ({ message: r.message, ...rangeToJson(r.span, lines) }));
  }
  if (finding.fromSamples) out.fromSamples = { ...finding.fromSamples };
  return out;
}

export function intervalToJson(interval: Interval): JsonInterval {
  return { lower: jsonLower(interval.lower), upper: jsonUpper(interval.upper) };
}

function reachToJson(reach: ReachAtStart): JsonReach {
  return {
    goal: jsonProbability(reach.goal),
    failure: jsonProbability(reach.failure),
    none: jsonProbability(reach.none),
    neutral: jsonProbability(reach.neutral),
  };
}

export function analysisToJson(analysis: Analysis, model: CompiledModel, withValues: boolean): JsonAnalysis {
  const start = analysis.start;
  const out: JsonAnalysis = {
    states: model.stateCount,
    transitions: model.choiceCount,
    exact: analysis.exact,
    start: {
      optimal: intervalToJson(start.optimal),
      worst: intervalToJson(start.worst),
      random: intervalToJson(start.random),
      reach: { optimal: reachToJson(start.reach.optimal), random: reachToJson(start.reach.random) },
      maxGoalReach: jsonProbability(start.maxGoalReach),
      expectedLength: {
        optimal: jsonPoint(start.expectedLength.optimal),
        random: jsonPoint(start.expectedLength.random),
      },
    },
    outcomes: model.outcomeCount,
    objective: model.maximize ? 'maximize' : 'minimize',
    discount: model.discount,
    precision: jsonPoint(analysis.precision),
    solver: { sweeps: analysis.iterations, solves: analysis.solves, krylovIterations: analysis.krylovIterations },
    terms: analysis.termShares.map((t) => ({
      term: t.term,
      value: jsonPoint(t.value),
      share: Number.isNaN(t.share) ? 0 : roundNearest(t.share),
    })),
  };
  if (model.horizon !== undefined) out.horizon = model.horizon;
  if (withValues) out.values = stateValuesToJson(analysis, model);
  return out;
}

function stateValuesToJson(analysis: Analysis, model: CompiledModel): Record<string, JsonStateValues> {
  // A null-prototype object, so that a state named "__proto__" is an ordinary key.
  const values: Record<string, JsonStateValues> = Object.create(null);
  const bounds = (b: { lower: Float64Array; upper: Float64Array }, i: number): JsonInterval => ({
    lower: jsonLower(b.lower[i]),
    upper: jsonUpper(b.upper[i]),
  });
  for (let s = 0; s < model.stateCount; s++) {
    const best: string[] = [];
    const q: Record<string, JsonInterval> = Object.create(null);
    for (let c = model.choiceStart[s]; c < model.choiceStart[s + 1]; c++) {
      const action = model.actionNames[model.choiceAction[c]];
      q[action] = bounds(analysis.q, c);
      if (analysis.isBest[c]) best.push(action);
    }
    const entry: JsonStateValues = {
      optimal: bounds(analysis.optimal.values, s),
      random: bounds(analysis.random.values, s),
      worst: bounds(analysis.worst.values, s),
      best,
      reachable: analysis.reachable[s] === 1,
      q,
      maxGoalReach: jsonProbability(analysis.maxGoalReach[s]),
    };
    const terminal = TERMINAL_OF_CODE[model.terminal[s]];
    if (terminal) entry.terminal = terminal;
    const label = model.stateLabels?.[s];
    if (label !== undefined) entry.label = label;
    values[model.stateIds[s]] = entry;
  }
  return values;
}
