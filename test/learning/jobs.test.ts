/**
 * --jobs N: a sampled model's rollouts, transition counts and learning split across sandbox
 * children must give the figures of a single child. Checked through the CLI on an example, and
 * piece by piece in process: the learning phases joined against one learning run, and the
 * replayed trajectory logs against one recorder.
 */
import { describe, expect, test } from 'vitest';
import { availableParallelism } from 'node:os';
import { cli } from '../cli/cli-harness';
import { DEFAULT_CONFIG } from '../../server/src/config';
import { parseConfigText } from '../../server/src/config-file';
import {
  Learner,
  joinLearning,
  learnWithSampler,
  CompiledSampler,
  DEFAULT_LEARNING,
  type LearnOptions,
  type MeasuredPart,
} from '../../server/src/sandbox/learn';
import { joinRolloutRuns, splitEpisodes } from '../../server/src/sandbox/parallel';
import { rolloutModel, type ModelFunctions, type RolloutOptions } from '../../server/src/sandbox/runtime';
import { TrajectoryLogger, TransitionRecorder, type RecordOptions } from '../../server/src/sandbox/transition-record';
import { checkSpec } from '../helpers/specs';
import { analyzeTs } from '../typescript/ts-specs';

const EXAMPLE = 'examples/stealth-guard-bonus.mdp.ts';

async function checkWithJobs(jobs: number) {
  const result = await cli([
    'check',
    EXAMPLE,
    '--format',
    'json',
    '--rollouts',
    '400',
    '--learn-steps',
    '40000',
    '--jobs',
    String(jobs),
    '--fail-on',
    'never',
  ]);
  expect(result.stderr).toBe('');
  expect(result.code).toBe(0);
  return JSON.parse(result.stdout) as { files: Array<{ rollouts?: Record<string, unknown>; findings: unknown[] }> };
}

describe('--jobs N on the command line', () => {
  test('the rollouts block (random, learned, learning) and the findings are the same for 1, 2 and 3 children', async () => {
    const one = await checkWithJobs(1);
    const rollouts = one.files[0].rollouts!;
    expect(rollouts.random).toBeDefined();
    expect(rollouts.learned).toBeDefined();
    expect((rollouts.learning as { states: unknown[] }).states.length).toBeGreaterThan(0);
    for (const jobs of [2, 3]) {
      const many = await checkWithJobs(jobs);
      expect(many.files[0].rollouts, `--jobs ${jobs}`).toEqual(rollouts);
      expect(many.files[0].findings, `--jobs ${jobs}`).toEqual(one.files[0].findings);
    }
  }, 240_000);

  test.each([['0'], ['1.5'], ['257'], ['two']])('--jobs %s is a usage error with one line', async (value) => {
    const result = await cli(['check', EXAMPLE, '--jobs', value]);
    expect(result.code).toBe(2);
    expect(result.stdout).toBe('');
    expect(result.stderr.trimEnd().split('\n')).toHaveLength(1);
    expect(result.stderr).toContain("option '--jobs' needs a whole number from 1 to 256");
  });
});

describe('model output with several children', () => {
  // Each process prints once, on its first sample: the rollouts' child and the trainer both sample.
  const printing = `let printed = false;
export default { name: 'printer', discount: 0.9, start: 0, actions: () => ['go'],
  sample: (s, a, rng) => {
    if (!printed) { printed = true; console.log('first sample in this process'); }
    return { state: s + 1, reward: 1, terminal: rng() < 0.3 ? 'goal' : undefined };
  } };`;

  test('what every child printed is kept, the first child first', { timeout: 120_000 }, async () => {
    const count = (text: string | undefined) => (text ?? '').split('first sample in this process').length - 1;
    const one = await analyzeTs(printing, { rollouts: 50, jobs: 1, learning: { steps: 500 } });
    expect(count(one.modelOutput)).toBe(1);
    const two = await analyzeTs(printing, { rollouts: 50, jobs: 2, learning: { steps: 500 } });
    expect(count(two.modelOutput)).toBe(2);
    expect(two.rollouts).toEqual(one.rollouts);
  });
});

describe('jobs in the config file', () => {
  test('a whole number from 1 to 256 applies; anything else is a config finding at the value and the default stays', () => {
    expect(parseConfigText('/c/episcope.config.json', '{ "jobs": 3 }').config.jobs).toBe(3);
    expect(DEFAULT_CONFIG.jobs).toBe(Math.min(256, availableParallelism()));
    for (const value of ['0', '1.5', '257', '"2"']) {
      const text = `{ "jobs": ${value} }`;
      const file = parseConfigText('/c/episcope.config.json', text);
      expect(
        file.findings.map((f) => f.rule),
        value,
      ).toEqual(['config']);
      expect(text.slice(file.findings[0].span.start, file.findings[0].span.end)).toBe(value);
      expect(file.config.jobs).toBe(DEFAULT_CONFIG.jobs);
    }
  });
});

describe('episode ranges', () => {
  test('consecutive, covering every episode once, sizes within one', () => {
    for (const [total, parts] of [
      [10, 3],
      [2, 5],
      [1000, 7],
      [1, 1],
    ]) {
      const ranges = splitEpisodes(total, parts);
      expect(ranges.length).toBe(Math.min(total, parts));
      let next = 0;
      for (const range of ranges) {
        expect(range.first).toBe(next);
        expect(range.count).toBeGreaterThan(0);
        next += range.count;
      }
      expect(next).toBe(total);
      const sizes = ranges.map((r) => r.count);
      expect(Math.max(...sizes) - Math.min(...sizes)).toBeLessThanOrEqual(1);
    }
  });
});

/**
 * Walks of our own on 400 separate corridors (state = corridor * 10 + position 0..6): "right" moves
 * up with probability 0.7, "left" with 0.2; position 6 is the goal, 0 a failure. Each episode picks a
 * corridor, so new keys keep coming in every range of episodes.
 */
function walkModel(options: { failKeyAt?: number; infiniteRewardAt?: number } = {}): ModelFunctions {
  return {
    start: (rng: () => number) => 10 * Math.floor(rng() * 400) + 2 + Math.floor(rng() * 3),
    actions: () => ['left', 'right'],
    sample: (state: unknown, action: unknown, rng: () => number) => {
      const s = state as number;
      const up = action === 'right' ? rng() < 0.7 : rng() < 0.2;
      const next = up ? s + 1 : s - 1;
      const position = next % 10;
      const reward =
        position === options.infiniteRewardAt ? Infinity : position === 6 ? 10 : -1 + Math.round(rng() * 100) / 100;
      return { state: next, reward, terminal: position === 6 ? 'goal' : position === 0 ? 'failure' : undefined };
    },
    stateKey:
      options.failKeyAt === undefined
        ? undefined
        : (state: unknown) => {
            if (state === options.failKeyAt) throw new Error('no key for this state');
            return String(state);
          },
  } as unknown as ModelFunctions;
}

/** A non-terminal state the walks meet first in the second range of episodes (101 to 200). */
function stateFirstMetInSecondRange(): number {
  const firstMet = new Map<number, number>();
  let episode = -1;
  rolloutModel(walkModel(), rolloutOptions(300), {
    begin: () => void episode++,
    step: (_action, next, _reward, _terms, code) => {
      if (code === 0 && !firstMet.has(next as number)) firstMet.set(next as number, episode);
    },
  });
  return [...firstMet].find(([, at]) => at > 120 && at < 180)![0];
}
const FAILING_KEY = stateFirstMetInSecondRange();

function rolloutOptions(episodes: number, record?: RecordOptions): RolloutOptions {
  return {
    episodes,
    seed: 7,
    discount: 0.95,
    stepCap: 200,
    declaredTerms: [],
    fingerprintEpisodes: 16,
    record,
    progress: new Int32Array(5),
  };
}

/** The counts of one recorder over every episode, and of a recorder fed the first range and the logs of the others. */
function countsBothWays(model: ModelFunctions, record: RecordOptions, episodes: number, parts: number) {
  const single = new TransitionRecorder(model, record, [], new Int32Array(5));
  const whole = rolloutModel(model, rolloutOptions(episodes, record), single);
  single.explore(7, []);
  const ranges = splitEpisodes(episodes, parts);
  const first = new TransitionRecorder(model, record, [], new Int32Array(5));
  const runs = ranges.map((range, k) => {
    const options = {
      ...rolloutOptions(range.count),
      firstEpisode: range.first,
      fingerprintEpisodes: Math.max(0, 16 - range.first),
    };
    if (k === 0) return rolloutModel(model, options, first);
    const logger = new TrajectoryLogger(model, record, 0, new Int32Array(5));
    const run = rolloutModel(model, options, logger);
    run.log = logger.result();
    return run;
  });
  for (const run of runs.slice(1)) first.replay(run.log!);
  first.explore(7, []);
  return {
    whole,
    joined: joinRolloutRuns(runs, 16),
    single: single.result(),
    split: first.result(),
    singleProblem: single.problem,
    splitProblem: first.problem,
  };
}

describe('transition counts from replayed logs', () => {
  const record: RecordOptions = { keyCap: 5000, tries: 30, exploreBudget: 100_000, countedSteps: 200_000 };
  test.each([
    ['every step counted', record, {}],
    ['counting stops part-way through the second range', { ...record, countedSteps: 1400 }, {}],
    ['the key cap is reached in a later range', { ...record, keyCap: 700 }, {}],
    ['a state key that cannot be formed in a later range', record, { failKeyAt: FAILING_KEY }],
    ['a reward that is not finite', record, { infiniteRewardAt: 5 }],
  ] as const)('%s: the same counts as one recorder', (_name, options, model) => {
    const both = countsBothWays(walkModel(model), options, 300, 3);
    expect(both.whole.problem).toBeUndefined();
    expect(both.whole.completed).toBe(300);
    expect(both.joined.records).toEqual(both.whole.records);
    expect(both.joined.fingerprints).toEqual(both.whole.fingerprints);
    expect(both.joined.nonFiniteEpisodes).toBe(both.whole.nonFiniteEpisodes);
    expect(both.split).toEqual(both.single);
    // The stacks differ in the host's frames only; the host maps the first frame of model code.
    expect({ ...both.splitProblem, stack: undefined }).toEqual({ ...both.singleProblem, stack: undefined });
  });

  test('the cases above reach their cut-offs after the first range', () => {
    const counted = countsBothWays(walkModel(), { ...record, countedSteps: 1400 }, 300, 3).single;
    expect(counted.episodes).toBeGreaterThan(100);
    expect(counted.episodes).toBeLessThan(200);
    const capped = countsBothWays(walkModel(), { ...record, keyCap: 700 }, 300, 3);
    expect(capped.single.stopped).toMatch(/distinct state keys/);
    expect(capped.split.episodes).toBeGreaterThan(100);
    const failing = countsBothWays(walkModel({ failKeyAt: FAILING_KEY }), record, 300, 3);
    expect(failing.singleProblem?.phase).toBe('stateKey');
    expect(failing.single.episodes).toBeGreaterThan(100);
  });
});

describe('learning in phases', () => {
  /** A slippery corridor of our own as a compiled model: the learner samples it through CompiledSampler. */
  const corridor = checkSpec({
    discount: 0.9,
    start: 's0',
    actions: ['back', 'on'],
    states: { s0: {}, s1: {}, s2: {}, s3: {}, end: { terminal: 'goal' } },
    transitions: [
      { from: 's0', action: 'on', to: { s1: 0.8, s0: 0.2 }, reward: -1 },
      { from: 's0', action: 'back', to: 's0', reward: -2 },
      { from: 's1', action: 'on', to: { s2: 0.8, s0: 0.2 }, reward: -1 },
      { from: 's1', action: 'back', to: 's0', reward: -0.5 },
      { from: 's2', action: 'on', to: { s3: 0.8, s1: 0.2 }, reward: -1 },
      { from: 's2', action: 'back', to: 's1', reward: -0.5 },
      { from: 's3', action: 'on', to: 'end', reward: 5 },
      { from: 's3', action: 'back', to: 's2', reward: -0.5 },
    ],
  }).model!;

  test.each([
    ['q-learning, a full budget', { method: 'q-learning' as const, steps: 5000 }],
    ['monte-carlo, a small budget', { method: 'monte-carlo' as const, steps: 40 }],
    ['q-learning with a horizon', { method: 'q-learning' as const, steps: 3000, horizon: 6 }],
    ['q-learning on two steps: measuring meets states training never met', { method: 'q-learning' as const, steps: 2 }],
  ])('%s: trained, measured in three ranges and joined, the same as one run', (_name, setup) => {
    const model = { ...corridor, horizon: 'horizon' in setup ? setup.horizon : undefined };
    const options: LearnOptions = {
      settings: {
        ...DEFAULT_LEARNING,
        method: setup.method,
        steps: setup.steps,
        evaluationEpisodes: 90,
        decisionEpisodes: 40,
      },
      seed: 3,
      discount: model.discount,
      horizon: model.horizon,
      stepCap: 100,
      maximize: true,
      // A compiled model's keys are its state ids.
      watchKeys: ['s1', 's3', 'nowhere'],
    };
    const single = learnWithSampler(new CompiledSampler(model), options);
    const trainer = new Learner(new CompiledSampler(model), options);
    trainer.train();
    const trained = {
      table: trainer.exportTable(),
      spent: { episodes: trainer.episodes, steps: trainer.steps },
      kept: trainer.keptStates(),
      watched: trainer.watchedStates(),
    };
    const parts: MeasuredPart[] = splitEpisodes(90, 3).map((range) => {
      const learner = new Learner(new CompiledSampler(model), options, trained.table);
      const path = range.first === 0 ? { keys: [], actions: [], truncated: false } : undefined;
      return learner.measuredBeyond(learner.measure(range.first, range.count, path), path);
    });
    const decision = {};
    trainer.decide(decision, 90);
    const joined = joinLearning(options.settings, trained, parts, decision);
    expect(joined.evaluation).toEqual(single.evaluation);
    expect(joined.summary).toEqual(single.summary);
    if (setup.steps > 2) expect(single.summary.sourceStates!.map((state) => state.key)).toContain('s1');
    else expect(parts.filter((part) => part.newKeys.length > 0 && part.newStates.length > 0).length).toBeGreaterThan(1);
  });
});
