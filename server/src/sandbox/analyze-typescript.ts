/**
 * The TypeScript-spec pipeline: static reading (ts-morph), then, when execution is allowed, the
 * model code in the sandbox: an enumerable model is enumerated into a CompiledModel and gets the
 * same exact analysis and rules as a JSON spec; a sampled model gets seeded rollouts. Never throws.
 */
import { isAbsolute, relative, resolve } from 'node:path';
import {
  effectiveStepCap,
  END_NONE,
  summarizeEpisodes,
  type EpisodeRecords,
  type RolloutReport,
} from '../analysis/rollouts';
import { DEFAULT_CONFIG, ruleThreshold, type ResolvedConfig } from '../config';
import type { Finding } from '../findings';
import type { AnalyzeOptions, LoadedSpec } from '../report';
import type { CompiledModel } from '../model/compiled';
import { episodeNeverEnds } from '../rules/episode-never-ends';
import { describeCall, modelError } from '../rules/model-error';
import { findRule } from '../rules/registry';
import { LineIndex } from '../load/lines';
import { applyField, readTypeScriptSpec, type TypeScriptReading } from '../load/typescript';
import type { LocatedProblem, RandomnessSite, TypeScriptEvidence } from '../load/typescript-evidence';
import type { ParsedSpec, Span } from '../load/types';
import type { SourceLocation } from './bundle';
import { clip, ModelSandbox, type ModelFailure, type RandomnessUse } from './host';
import { DEFAULT_LEARNING, joinLearning, type LearnJobOptions, type MeasuredPart, type TrainedPart } from './learn';
import { joinRolloutRuns, splitEpisodes } from './parallel';
import type { ModelDescription } from './protocol';
import type { Enumeration, ModelFunction, RolloutOptions, RolloutRun, RuntimeProblem } from './runtime';
import type { RecordOptions } from './transition-record';
import { buildEmpiricalModel } from '../model/empirical';
import { TERMINAL_CODE } from '../model/compiled';
import { empiricalModel } from '../rules/empirical-model';
import type { TerminalKind } from '../load/types';

/** Rollouts of a sampled model when the config asks for none (config.rollouts = 0). */
export const DEFAULT_SAMPLED_ROLLOUTS = 1000;
/** Choices called twice to check that an enumerable model is deterministic. */
const RECHECKED_STATES = 200;
/** Episodes replayed to check that a sampled model is deterministic. */
const REPLAYED_EPISODES = 16;

/**
 * Loads a `*.mdp.ts` spec: reads its static fields and, when execution is allowed, runs the model
 * code in the sandbox. The result holds the enumerated model (or why there is none) and the
 * rollouts; analyze.ts continues from there. Never throws.
 */
export async function loadTypeScriptSpec(
  path: string,
  text: string,
  options: AnalyzeOptions = {},
): Promise<LoadedSpec> {
  const config = options.config ?? DEFAULT_CONFIG;
  const reading = readTypeScriptSpec(text);
  const evidence = reading.spec.typescript!;
  const findings: Finding[] = [...reading.findings];
  const internalErrors = reading.internalError ? [reading.internalError] : [];
  let enumerated: { model?: CompiledModel; reason?: string };
  let rollouts: RolloutReport | undefined;
  let empirical: CompiledModel | undefined;
  if (reading.internalError) {
    evidence.notExecuted = 'the model code was not run because the spec could not be read';
    enumerated = { reason: reading.internalError };
  } else if (options.exec === false) {
    evidence.notExecuted =
      'the model code was not run (static checks only: --no-exec, or a workspace that is not trusted)';
    enumerated = { reason: evidence.notExecuted };
  } else if (!reading.found || reading.syntaxErrors) {
    evidence.notExecuted = reading.syntaxErrors
      ? 'the model code was not run because it has syntax errors'
      : 'the model code was not run because the spec could not be read';
    enumerated = { reason: evidence.notExecuted };
  } else {
    try {
      const run = await runModel(path, text, reading, config, options, findings);
      enumerated = run.prebuilt;
      rollouts = run.rollouts;
      empirical = run.empirical;
    } catch (error) {
      // Failures of model code arrive as ModelFailure values; a throw here is a bug of ours.
      const reason = `running the model failed: ${error instanceof Error ? error.message : String(error)}`;
      enumerated = { reason };
      internalErrors.push(reason);
    }
  }
  return {
    spec: reading.spec,
    findings,
    enumerated,
    rollouts,
    empirical,
    internalErrors,
    cancelled: options.isCancelled?.() === true,
    modelOutput: sandboxOutput.get(findings),
  };
}

interface RunResult {
  prebuilt: { model?: CompiledModel; reason?: string };
  rollouts?: RolloutReport;
  empirical?: CompiledModel;
}

/** The model output of a run, keyed by the run's findings list (one per loadTypeScriptSpec call). */
const sandboxOutput = new WeakMap<Finding[], string>();

/** Records what model code printed, and says where the boundary is weaker than documented on this machine. */
function recordSandbox(
  findings: Finding[],
  spec: ParsedSpec,
  output: string | undefined,
  notices: readonly string[],
): void {
  if (output) sandboxOutput.set(findings, output);
  for (const notice of notices) {
    findings.push({
      rule: 'model-error',
      severity: 'warning',
      message: `sandbox weaker than usual: ${notice}`,
      span: spec.rootSpan,
    });
  }
}

async function runModel(
  path: string,
  text: string,
  reading: TypeScriptReading,
  config: ResolvedConfig,
  options: AnalyzeOptions,
  findings: Finding[],
): Promise<RunResult> {
  const { spec } = reading;
  const evidence = spec.typescript!;
  const place = new Placer(path, text, spec);
  const limits = {
    callTimeoutMs: ruleThreshold(config, modelError, 'callTimeoutMs'),
    memoryMb: ruleThreshold(config, modelError, 'memoryMb'),
    jobTimeoutMs: ruleThreshold(config, modelError, 'jobTimeoutMs'),
  };
  const isCancelled = options.isCancelled ?? (() => false);
  const started = await ModelSandbox.start(path, text, limits, isCancelled);
  evidence.executed = true;
  addRandomness(evidence, started.randomness, place);
  if (started.failure) {
    recordSandbox(findings, spec, started.output, started.notices ?? []);
    place.failure(evidence, started.failure);
    return { prebuilt: { reason: 'the model code failed (see model-error)' } };
  }
  const { sandbox, description } = started.value!;
  recordSandbox(findings, spec, undefined, sandbox.notices);
  let helpers: ModelSandbox[] = [];
  try {
    const fieldProblems = applyDescription(spec, reading, description);
    for (const problem of fieldProblems) findings.push(problem);
    const members = description.members;
    if (members.actions !== 'function' || (members.outcomes !== 'function' && members.sample !== 'function')) {
      if (!reading.findings.some((f) => f.rule === 'schema')) {
        evidence.modelErrors.push({
          kind: 'malformed',
          phase: 'load',
          message:
            'the default export needs an actions(state) function and outcomes(state, action) or sample(state, action, rng)',
          span: spec.rootSpan,
        });
      }
      return { prebuilt: { reason: 'the spec does not define its dynamics' } };
    }
    if (spec.discount === undefined || fieldProblems.length > 0)
      return { prebuilt: { reason: 'the spec has no valid discount' } };
    const declaredTerms = spec.rewardTerms.map((t) => t.name);
    if (members.outcomes === 'function') {
      evidence.form = 'enumerable';
      const began = Date.now();
      const enumerated = await sandbox.enumerate({
        stateCap: config.stateCap,
        declaredTerms,
        recheckChoices: RECHECKED_STATES,
      });
      addRandomness(evidence, enumerated.randomness, place);
      if (enumerated.failure) {
        place.failure(evidence, enumerated.failure);
        return { prebuilt: { reason: 'the model code failed (see model-error)' } };
      }
      const result = enumerated.value!;
      const producer = (evidence.members.outcomes ?? evidence.members.start)?.nameSpan ?? spec.rootSpan;
      evidence.enumeration = {
        states: result.stateKeys.length,
        choices: result.choiceAction.length,
        outcomes: result.outcomesListed,
        milliseconds: Date.now() - began,
        capped: result.capped,
        cap: config.stateCap,
        firstBeyondCap: result.firstBeyondCap,
        span: producer,
      };
      if (result.problem) {
        place.failure(evidence, sandbox.locate(result.problem), findings);
        const kind = result.problem.kind;
        const rule =
          kind === 'dead-end' || kind === 'probability-sum' || kind === 'non-finite-reward' ? kind : 'model-error';
        return { prebuilt: { reason: `the model code describes no well-defined MDP (see ${rule})` } };
      }
      for (const site of result.nondeterminism) {
        const call = describeCall({ phase: site.phase, state: site.state, action: site.action });
        evidence.nondeterminism.push({
          message: `${call} answered differently when called again with the same arguments: first ${site.first}, then ${site.second}`,
          span: place.memberName(site.phase),
        });
      }
      if (evidence.nondeterminism.length > 0)
        return { prebuilt: { reason: 'the model is not deterministic (see nondeterministic-model)' } };
      if (spec.start.length === 0) {
        spec.start = Array.from(result.startStates, (s, i) => ({
          state: result.stateKeys[s],
          probability: result.startProbs[i],
          span: place.memberName('start'),
        }));
      }
      if (!result.capped) return { prebuilt: { model: compiledFromEnumeration(result, spec, evidence, producer) } };
      // Past the cap: estimate by sampling the listed outcomes.
    } else {
      evidence.form = 'sampled';
    }
    helpers = await startHelpers(sandbox, config.jobs - 1, evidence, place);
    // With a second child, training runs there beside the random rollouts; the others roll out.
    const trainer = config.learning.method !== 'off' ? helpers[0] : undefined;
    const training = trainer?.train(
      learnOptions(spec, config, declaredTerms, config.rollouts > 0 ? config.rollouts : DEFAULT_SAMPLED_ROLLOUTS),
    );
    const rollers = [sandbox, ...helpers.filter((helper) => helper !== trainer)];
    const sampled = await sampleByRollouts(rollers, spec, config, declaredTerms, evidence, place, findings);
    const stats = sampled.stats;
    const rollouts: RolloutReport | undefined = stats ? { random: stats } : undefined;
    // Learning needs a model that rolled out cleanly: a failure there (a bad state key included,
    // since learning keys states the same way) would only repeat itself as a second model-error.
    const clean =
      evidence.nondeterminism.length === 0 &&
      !findings.some((f) => f.rule === 'non-finite-reward') &&
      !evidence.modelErrors.some((p) => p.phase === 'stateKey');
    if (rollouts && config.learning.method !== 'off' && clean && !isCancelled()) {
      if (trainer && training)
        await learnInParts(
          trainer,
          training,
          rollers,
          spec,
          config,
          declaredTerms,
          stats!.episodes,
          evidence,
          place,
          findings,
          rollouts,
        );
      else
        await learnFromSamples(
          sandbox,
          spec,
          config,
          declaredTerms,
          stats!.episodes,
          evidence,
          place,
          findings,
          rollouts,
        );
    }
    return {
      prebuilt: {
        reason:
          evidence.form === 'sampled'
            ? 'a sampled model has no exact values; see the rollout estimates'
            : 'enumeration stopped at the state cap; see the rollout estimates',
      },
      rollouts,
      empirical: sampled.empirical,
    };
  } finally {
    // What model code printed, child by child (the first child's first): each child printed only during its own jobs.
    const output = [sandbox, ...helpers]
      .map((child) => child.output())
      .filter((text) => text !== '')
      .join('\n');
    if (output) sandboxOutput.set(findings, output);
    // A helper still busy (training that is no longer wanted) is killed; the others wait warm.
    for (const helper of helpers) await helper.close();
    await sandbox.close();
  }
}

async function sampleByRollouts(
  rollers: ModelSandbox[],
  spec: ParsedSpec,
  config: ResolvedConfig,
  declaredTerms: string[],
  evidence: TypeScriptEvidence,
  place: Placer,
  findings: Finding[],
) {
  const episodes = config.rollouts > 0 ? config.rollouts : DEFAULT_SAMPLED_ROLLOUTS;
  const stepCap = ruleThreshold(config, episodeNeverEnds, 'stepCap');
  const common = {
    seed: config.seed,
    discount: spec.discount!.value,
    horizon: spec.horizon?.value,
    stepCap,
    declaredTerms,
  };
  // Only a black box gets an empirical model: an enumerable one past the state cap has too many keys anyway.
  const record: RecordOptions | undefined =
    evidence.form === 'sampled'
      ? {
          keyCap: ruleThreshold(config, empiricalModel, 'keyCap'),
          tries: ruleThreshold(config, empiricalModel, 'tries'),
          exploreBudget: ruleThreshold(config, empiricalModel, 'exploreBudget'),
          countedSteps: ruleThreshold(config, empiricalModel, 'countedSteps'),
        }
      : undefined;
  const sandbox = rollers[0];
  const ran =
    rollers.length > 1
      ? await rolloutsInParts(rollers, common, episodes, record, evidence, place)
      : await sandbox.rollouts({ ...common, episodes, fingerprintEpisodes: REPLAYED_EPISODES, record });
  addRandomness(evidence, ran.randomness, place);
  if (ran.failure) {
    place.failure(evidence, ran.failure);
    return {};
  }
  const run = ran.value!;
  if (run.problem) {
    place.failure(evidence, sandbox.locate(run.problem), findings);
    return {};
  }
  const empirical = record ? empiricalOf(run, record, spec, config, evidence, place, sandbox, findings) : undefined;
  if (run.firstNonFinite) {
    const problem = place.problem({ ...run.firstNonFinite, location: undefined });
    findings.push(nonFiniteFinding(problem, run.nonFiniteEpisodes, episodes));
  }
  const replay = await sandbox.rollouts({
    ...common,
    episodes: Math.min(REPLAYED_EPISODES, episodes),
    fingerprintEpisodes: REPLAYED_EPISODES,
  });
  addRandomness(evidence, replay.randomness, place);
  const again = replay.value?.fingerprints ?? [];
  const differs = again.findIndex((hash, i) => hash !== run.fingerprints[i]);
  if (differs >= 0) {
    evidence.nondeterminism.push({
      message: `episode ${differs} of seed ${config.seed} took a different trajectory when replayed with the same seed`,
      span: place.memberName(evidence.form === 'sampled' ? 'sample' : 'outcomes'),
    });
  }
  const finite = onlyFinite(run.records);
  const stats = summarizeEpisodes(finite, {
    policy: 'random',
    seed: config.seed,
    stepCap: effectiveStepCap(common.discount, stepCap),
  });
  evidence.rollouts = stats;
  return { stats, empirical };
}

/**
 * Starts `count` more children for the same bundle (--jobs N), each loaded like the first. A child
 * that does not start is left out: fewer children change the time, never a figure.
 */
async function startHelpers(
  sandbox: ModelSandbox,
  count: number,
  evidence: TypeScriptEvidence,
  place: Placer,
): Promise<ModelSandbox[]> {
  if (count <= 0) return [];
  ModelSandbox.keepWarm(count + 1);
  const started = await Promise.all(Array.from({ length: count }, () => sandbox.sibling()));
  const helpers: ModelSandbox[] = [];
  for (const one of started) {
    addRandomness(evidence, one.randomness, place);
    if (one.sandbox) helpers.push(one.sandbox);
  }
  return helpers;
}

/**
 * The random policy's rollouts split into consecutive episode ranges, one per child, joined in
 * episode order. When transitions are counted, the first child counts its range and holds its
 * recorder; the others log what they saw, and the first child replays the logs in order and then
 * explores, so the counts are those of a single child.
 */
async function rolloutsInParts(
  rollers: ModelSandbox[],
  common: Omit<RolloutOptions, 'episodes' | 'fingerprintEpisodes' | 'progress'>,
  episodes: number,
  record: RecordOptions | undefined,
  evidence: TypeScriptEvidence,
  place: Placer,
): Promise<{ value?: RolloutRun; failure?: ModelFailure; randomness: RandomnessUse[] }> {
  const ranges = splitEpisodes(episodes, rollers.length);
  const outcomes = await Promise.all(
    ranges.map((range, k) =>
      rollers[k].rollouts({
        ...common,
        firstEpisode: range.first,
        episodes: range.count,
        fingerprintEpisodes: Math.max(0, REPLAYED_EPISODES - range.first),
        record: k === 0 ? record : undefined,
        holdRecording: k === 0 && record !== undefined ? true : undefined,
        log: k > 0 ? record : undefined,
      }),
    ),
  );
  const runs: RolloutRun[] = [];
  for (const outcome of outcomes) {
    addRandomness(evidence, outcome.randomness, place);
    // The first range that failed stands for the whole run, as the first failure of one child would.
    if (outcome.failure) return { failure: outcome.failure, randomness: [] };
    runs.push(outcome.value!);
    if (outcome.value!.problem) break;
  }
  const run = joinRolloutRuns(runs, REPLAYED_EPISODES);
  if (!record || run.problem) return { value: run, randomness: [] };
  const recorded = await rollers[0].record(
    runs
      .slice(1)
      .map((part) => part.log!)
      .filter((log) => log !== undefined),
    common.seed,
    common.declaredTerms,
  );
  if (recorded.failure) return { failure: recorded.failure, randomness: recorded.randomness };
  run.counts = recorded.value!.counts;
  run.countsProblem = recorded.value!.countsProblem;
  return { value: run, randomness: recorded.randomness };
}

/** The empirical model of the recorded counts, or undefined with the reason in the evidence. */
function empiricalOf(
  run: RolloutRun,
  record: RecordOptions,
  spec: ParsedSpec,
  config: ResolvedConfig,
  evidence: TypeScriptEvidence,
  place: Placer,
  sandbox: ModelSandbox,
  findings: Finding[],
): CompiledModel | undefined {
  const span = place.memberName('sample');
  if (run.countsProblem) place.failure(evidence, sandbox.locate(run.countsProblem), findings);
  const counts = run.counts;
  const built = counts
    ? buildEmpiricalModel(counts, {
        discount: spec.discount!.value,
        horizon: spec.horizon?.value,
        maximize: spec.objective !== 'minimize',
        terms: spec.rewardTerms.map((t) => t.name),
        span,
        tolerance: ruleThreshold(config, empiricalModel, 'tolerance'),
        declaredKinds: declaredTerminalKinds(place),
      })
    : { reason: 'no transition was recorded' };
  const model = built.model;
  evidence.empirical = {
    built: model !== undefined,
    reason: built.reason,
    states: model?.stateCount ?? counts?.nodes.length ?? 0,
    pairs: model?.choiceCount ?? 0,
    episodes: counts?.episodes ?? 0,
    steps: counts?.steps ?? 0,
    exploreSamples: counts?.exploreSamples ?? 0,
    unexplored: model?.samples?.unexploredCount ?? 0,
    complete: model?.samples?.complete ?? false,
    exploreCut: counts?.exploreCut,
    exploreBudget: record.exploreBudget,
    tries: record.tries,
    span,
  };
  return model;
}

/**
 * The terminal kinds the model code names: string literals "goal", "failure" or "neutral" in its
 * `sample` and `terminal` members (what unreachable-terminal checks the samples against).
 */
function declaredTerminalKinds(place: Placer): Set<number> {
  const kinds = new Set<number>();
  for (const name of ['sample', 'terminal']) {
    for (const match of place.memberSource(name).matchAll(/['"`](goal|failure|neutral)['"`]/g))
      kinds.add(TERMINAL_CODE[match[1] as TerminalKind]);
  }
  return kinds;
}

/**
 * Learns action values in the sandbox (sandbox/learn.ts) and adds the learned greedy policy's
 * figures beside the random policy's. Its measured episodes are as many as the random policy's,
 * on the same model draws.
 */
async function learnFromSamples(
  sandbox: ModelSandbox,
  spec: ParsedSpec,
  config: ResolvedConfig,
  declaredTerms: string[],
  episodes: number,
  evidence: TypeScriptEvidence,
  place: Placer,
  findings: Finding[],
  rollouts: RolloutReport,
): Promise<void> {
  if (config.learning.method === 'off') return;
  const stepCap = ruleThreshold(config, episodeNeverEnds, 'stepCap');
  const learned = await sandbox.learn(learnOptions(spec, config, declaredTerms, episodes));
  addRandomness(evidence, learned.randomness, place);
  if (learned.failure) {
    place.failure(evidence, learned.failure);
    return;
  }
  const run = learned.value!;
  if (run.problem) {
    place.failure(evidence, sandbox.locate(run.problem), findings);
    return;
  }
  rollouts.learned = summarizeEpisodes(run.evaluation, {
    policy: 'learned',
    seed: config.seed,
    stepCap: effectiveStepCap(spec.discount!.value, stepCap),
  });
  rollouts.learning = run.summary;
}

/** The learning job's options; `episodes` is the number of measured episodes (as many as the random policy's). */
function learnOptions(
  spec: ParsedSpec,
  config: ResolvedConfig,
  declaredTerms: string[],
  episodes: number,
): LearnJobOptions {
  const method = config.learning.method === 'off' ? DEFAULT_LEARNING.method : config.learning.method;
  return {
    settings: { ...DEFAULT_LEARNING, ...config.learning, method, evaluationEpisodes: episodes },
    seed: config.seed,
    discount: spec.discount!.value,
    horizon: spec.horizon?.value,
    stepCap: ruleThreshold(config, episodeNeverEnds, 'stepCap'),
    maximize: spec.objective !== 'minimize',
    declaredTerms,
    watchKeys: [...new Set((spec.typescript?.literals ?? []).map((literal) => literal.key))],
  };
}

/**
 * Learning split across children (--jobs N): the trainer's table, measured in consecutive
 * episode ranges by every child, and the trainer's decision on the start actions, joined into the
 * figures a single child gives (learn.ts, joinLearning). The first failure in the order a single
 * child meets them (training, the ranges, the decision) stands for the whole run.
 */
async function learnInParts(
  trainer: ModelSandbox,
  training: Promise<{
    value?: { trained?: TrainedPart; problem?: RuntimeProblem };
    failure?: ModelFailure;
    randomness: RandomnessUse[];
  }>,
  rollers: ModelSandbox[],
  spec: ParsedSpec,
  config: ResolvedConfig,
  declaredTerms: string[],
  episodes: number,
  evidence: TypeScriptEvidence,
  place: Placer,
  findings: Finding[],
  rollouts: RolloutReport,
): Promise<void> {
  const options = learnOptions(spec, config, declaredTerms, episodes);
  const trainedOutcome = await training;
  addRandomness(evidence, trainedOutcome.randomness, place);
  const failed = (failure: ModelFailure | undefined, problem: RuntimeProblem | undefined): boolean => {
    if (failure) place.failure(evidence, failure);
    else if (problem) place.failure(evidence, trainer.locate(problem), findings);
    return failure !== undefined || problem !== undefined;
  };
  if (failed(trainedOutcome.failure, trainedOutcome.value?.problem)) return;
  const trained = trainedOutcome.value!.trained!;
  // The trainer measures the first range (it traces the path) and then decides, so it needs no copy of the table it holds.
  const children = [trainer, ...rollers];
  const ranges = splitEpisodes(episodes, children.length);
  const work = await Promise.all(
    children.map(async (child, k) => {
      const range = ranges[k];
      const measured = range
        ? await child.measure({ ...options, table: trained.table, first: range.first, count: range.count })
        : undefined;
      const decided = k === 0 ? await child.decide(episodes) : undefined;
      return { measured, decided };
    }),
  );
  const parts: MeasuredPart[] = [];
  for (const { measured } of work) {
    if (!measured) continue;
    addRandomness(evidence, measured.randomness, place);
    if (failed(measured.failure, measured.value?.problem)) return;
    parts.push(measured.value!.part!);
  }
  const decided = work[0].decided!;
  addRandomness(evidence, decided.randomness, place);
  if (failed(decided.failure, decided.value?.problem)) return;
  const run = joinLearning(options.settings, trained, parts, decided.value!.decision);
  rollouts.learned = summarizeEpisodes(run.evaluation, {
    policy: 'learned',
    seed: config.seed,
    stepCap: effectiveStepCap(spec.discount!.value, options.stepCap),
  });
  rollouts.learning = run.summary;
}

/** Drops episodes whose return is not finite (they are reported by non-finite-reward). */
function onlyFinite(records: EpisodeRecords): EpisodeRecords {
  const keep: number[] = [];
  for (let i = 0; i < records.returns.length; i++) if (Number.isFinite(records.returns[i])) keep.push(i);
  if (keep.length === records.returns.length) return records;
  return {
    returns: Float64Array.from(keep, (i) => records.returns[i]),
    lengths: Int32Array.from(keep, (i) => records.lengths[i]),
    ends: Uint8Array.from(keep, (i) => records.ends[i] ?? END_NONE),
  };
}

function nonFiniteFinding(problem: LocatedProblem, episodes: number | undefined, total: number | undefined): Finding {
  const rule = findRule('non-finite-reward');
  const share =
    episodes !== undefined && total
      ? `; ${episodes} of ${total} rollouts got a non-finite reward and are left out of the estimates`
      : '';
  return {
    rule: 'non-finite-reward',
    severity: rule?.defaultSeverity ?? 'error',
    message: `${describeCall(problem)} returned ${problem.message}: every return that includes it is undefined${share}`,
    span: problem.span,
  };
}

/** Values of fields that are not literals in the source, taken from the running code. */
function applyDescription(spec: ParsedSpec, reading: TypeScriptReading, description: ModelDescription): Finding[] {
  const problems: Finding[] = [];
  const evidence = spec.typescript!;
  const fields: Array<keyof ModelDescription> = ['name', 'objective', 'discount', 'horizon', 'rewardTerms'];
  for (const field of fields) {
    const member = evidence.members[field];
    const statically = member !== undefined && !reading.dynamicFields.has(field);
    if (statically && !reading.dynamicFields.has('...')) continue;
    const value = description[field];
    if (value === undefined) continue;
    const span = member?.span ?? spec.rootSpan;
    for (const message of applyField(spec, field, value, span, span)) {
      problems.push({ rule: 'schema', severity: findRule('schema')?.defaultSeverity ?? 'error', message, span });
    }
  }
  if (spec.discount === undefined && !reading.findings.some((f) => f.rule === 'schema')) {
    problems.push({
      rule: 'schema',
      severity: 'error',
      message: 'the spec has no discount (0 <= discount <= 1)',
      span: spec.rootSpan,
    });
  }
  return problems;
}

function addRandomness(evidence: TypeScriptEvidence, uses: RandomnessUse[], place: Placer): void {
  for (const use of uses) {
    const located = place.location(use.location, 'load');
    const site: RandomnessSite = { api: use.api, count: use.count, span: located.span, elsewhere: located.elsewhere };
    const known = evidence.runtimeRandomness.find((r) => r.api === site.api && r.span.start === site.span.start);
    if (known) known.count = (known.count ?? 0) + use.count;
    else evidence.runtimeRandomness.push(site);
  }
}

/** Turns source locations and model failures into spans of the spec's text. */
class Placer {
  private readonly lines: LineIndex;
  private readonly file: string;

  constructor(
    file: string,
    private readonly text: string,
    private readonly spec: ParsedSpec,
  ) {
    this.lines = new LineIndex(text);
    this.file = resolve(file);
  }

  /** The name of the member that defines a model function, else the whole definition. */
  memberName(phase: ModelFunction | string): Span {
    const members = this.spec.typescript!.members;
    return (
      (members[phase] ?? (phase === 'start' ? members.startDistribution : undefined))?.nameSpan ?? this.spec.rootSpan
    );
  }

  /** The source text of a member of the default export ('' when it has none). */
  memberSource(name: string): string {
    const member = this.spec.typescript!.members[name];
    return member ? this.text.slice(member.span.start, member.span.end) : '';
  }

  /** A span for a source location: its line in the spec, or the member's name with "file:line:col". */
  location(location: SourceLocation | undefined, phase: ModelFunction | string): { span: Span; elsewhere?: string } {
    if (!location) return { span: this.memberName(phase) };
    if (resolve(location.file) === this.file) {
      const start = this.lines.offset({ line: location.line, character: 0 });
      const next = this.lines.offset({ line: location.line + 1, character: 0 });
      const lineText = this.text.slice(start, next).replace(/\s+$/, '');
      const indent = lineText.length - lineText.trimStart().length;
      return { span: { start: start + indent, end: start + Math.max(indent + 1, lineText.length) } };
    }
    const shown = isAbsolute(location.file)
      ? relative(resolve(this.file, '..'), location.file) || location.file
      : location.file;
    return { span: this.memberName(phase), elsewhere: `${shown}:${location.line + 1}:${location.column + 1}` };
  }

  problem(failure: ModelFailure): LocatedProblem {
    const { span, elsewhere } = this.location(failure.location, failure.phase);
    return {
      kind: failure.kind,
      phase: failure.phase,
      // Model code chooses these texts; a finding stays readable whatever it threw.
      message: clip(failure.message),
      span,
      elsewhere,
      state: failure.state,
      action: failure.action,
      episode: failure.episode,
      step: failure.step,
    };
  }

  /** Records a failure as model-error evidence (or a non-finite-reward finding). */
  failure(evidence: TypeScriptEvidence, failure: ModelFailure, findings?: Finding[]): void {
    if (failure.kind === 'cancelled') return;
    const problem = this.problem(failure);
    if (failure.kind === 'non-finite-reward' && findings) {
      findings.push(nonFiniteFinding(problem, undefined, undefined));
      evidence.nonFiniteRewards.push(problem);
      return;
    }
    if (failure.kind === 'dead-end' || failure.kind === 'probability-sum') {
      evidence.structuralProblems.push(problem);
      return;
    }
    evidence.modelErrors.push(problem);
  }
}

/** Each key's position, built in one pass without a pair array per state. */
function indexOfKeys(keys: readonly string[]): Map<string, number> {
  const index = new Map<string, number>();
  for (let i = 0; i < keys.length; i++) index.set(keys[i], i);
  return index;
}

/**
 * The CompiledModel of an enumeration. State ids are the canonical keys; every state points at
 * the function that produced it (`start` for start states, `outcomes` for the others).
 */
function compiledFromEnumeration(
  result: Enumeration,
  spec: ParsedSpec,
  evidence: TypeScriptEvidence,
  producer: Span,
): CompiledModel {
  const stateCount = result.stateKeys.length;
  const startSpan = (evidence.members.start ?? evidence.members.startDistribution)?.nameSpan ?? producer;
  const stateSpan = new Array<Span>(stateCount).fill(producer);
  for (const s of result.startStates) stateSpan[s] = startSpan;
  // A string state's key is quoted JSON; its label is the bare string.
  const stateLabels = result.stateKeys.map((key) => (key.startsWith('"') ? (JSON.parse(key) as string) : undefined));
  const choiceCount = result.choiceAction.length;
  return {
    stateCount,
    choiceCount,
    outcomeCount: result.outcomeTarget.length,
    stateIds: result.stateKeys,
    stateIndex: indexOfKeys(result.stateKeys),
    stateLabels: stateLabels.some((label) => label !== undefined) ? stateLabels : undefined,
    terminal: result.terminal,
    actionNames: result.actionNames,
    choiceStart: result.choiceStart,
    choiceAction: result.choiceAction,
    choiceTransition: new Int32Array(choiceCount).fill(-1),
    outcomeStart: result.outcomeStart,
    outcomeTarget: result.outcomeTarget,
    outcomeProb: result.outcomeProb,
    outcomeReward: result.outcomeReward,
    termNames: result.termNames,
    outcomeTermReward: result.termRewards,
    startState: result.startStates,
    startProb: result.startProbs,
    discount: spec.discount!.value,
    horizon: spec.horizon?.value,
    maximize: spec.objective !== 'minimize',
    stateSpan,
  };
}
