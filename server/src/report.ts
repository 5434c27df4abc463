/**
 * The pipeline's data between its stages: what a loader returns (LoadedSpec) and what analyze.ts
 * makes of it (FileReport). Types only, so that loaders, suppression and the fronts can name them
 * without importing the pipeline.
 */
import type { RolloutReport } from './analysis/rollout-stats';
import type { Analysis } from './analysis/types';
import type { WarmStart } from './analysis/warm-start';
import type { ResolvedConfig } from './config';
import type { Finding, SuppressedFinding } from './findings';
import type { CompiledModel } from './model/compiled';
import type { JsonReadMemory } from './load/json';
import type { LineIndex } from './load/lines';
import type { ParsedSpec } from './load/types';

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
  /**
   * The solution of an earlier analysis of the same spec (Analysis.solution), which the solvers
   * start from; every printed bound is verified as on a cold start (analysis/warm-start.ts).
   */
  startFrom?: WarmStart;
  /** Keep the analysis' solution in Analysis.solution (the language server hands it to the next analysis). */
  keepSolution?: boolean;
  /**
   * Held by the caller from one analysis of a JSON spec to the next analysis of the same document
   * (each analysis worker of the language server keeps one per recent document): an edit inside one value is then read by
   * patching the last read instead of reading the whole text (load/json-reread.ts).
   */
  readMemory?: JsonReadMemory;
}

/** What loading a spec of either format gives: the spec, the loader's findings, and for TypeScript the run's results. */
export interface LoadedSpec {
  spec: ParsedSpec;
  /** Findings of the loader: schema problems, and for TypeScript the run's non-finite rewards and field problems. */
  findings: Finding[];
  /**
   * The model the TypeScript sandbox enumerated, or why there is none. Undefined for JSON specs:
   * analyze.ts compiles the ParsedSpec.
   */
  enumerated?: { model?: CompiledModel; reason?: string };
  /** Rollout figures of a sampled (or capped) TypeScript model. */
  rollouts?: RolloutReport;
  /**
   * Why the document could not be read as a spec (too large, not JSON), when that is so. It is the
   * reason given when there is no model, rather than what the empty or partial spec lacks.
   */
  unreadable?: string;
  /**
   * The model built from a sampled model's transitions (model/empirical.ts). The rules run on it and
   * their findings carry the sample evidence; its figures are never shown as exact values.
   */
  empirical?: CompiledModel;
  /** Failures of ours while loading (a bug, not a problem of the spec); they end in FileReport.internalErrors. */
  internalErrors: string[];
  cancelled?: boolean;
  /** What TypeScript model code printed to stdout and stderr in the sandbox (cut to a readable length). */
  modelOutput?: string;
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
  /** Failures of ours anywhere in the pipeline (loader, compiler, analysis, a rule, suppression), with the error text. */
  internalErrors: string[];
  cancelled?: boolean;
  /** Findings hidden by a config `ignore` entry or an `episcope-ignore` comment (see suppress.ts). */
  suppressed?: SuppressedFinding[];
  /**
   * Monte Carlo figures (analysis/rollouts.ts): for sampled TypeScript models always, for exactly
   * analysed models when config `rollouts` > 0 (optimal and random policy).
   */
  rollouts?: RolloutReport;
  /** The empirical model of a sampled model and its analysis, when it was built (see LoadedSpec.empirical). */
  empirical?: { model: CompiledModel; analysis?: Analysis };
  /** What TypeScript model code printed (LoadedSpec.modelOutput); never part of the CLI's own output streams. */
  modelOutput?: string;
}
