/**
 * Bad key functions and state spaces too large to count: each gets a model-error or an info
 * finding that says the empirical model was not built, never a crash, and the rollout estimates
 * are still reported.
 */
import { describe, expect, it } from 'vitest';
import { analyzeTs, FAST_LIMITS, findingsOf } from '../typescript/ts-specs';

/** A sampled walk on a line from 0 to 5 (goal at 5), with `extra` members added to the definition. */
function walk(extra: string, step = 'state + (action === "right" ? 1 : -1)'): string {
  return `import { defineMdp } from 'episcope';
export default defineMdp({
  name: 'walk',
  discount: 0.9,
  start: 0,
  actions: () => ['left', 'right'],
  sample(state: number, action: string, rng) {
    const next = Math.max(0, ${step});
    return next >= 5 ? { state: 5, reward: 1, terminal: 'goal' as const } : { state: next, reward: 0 };
  },
${extra}
});
`;
}

describe('bad key functions', () => {
  it('a stateKey that throws: model-error at its line and the empirical model not built', async () => {
    const report = await analyzeTs(
      walk(`  stateKey(state: number) {\n    throw new Error('no key for ' + state);\n  },`),
      FAST_LIMITS,
    );
    const errors = findingsOf(report, 'model-error');
    expect(errors).toHaveLength(1);
    expect(errors[0].message).toContain('stateKey(');
    expect(errors[0].message).toContain('no key for 0');
    expect(report.lines.position(errors[0].span.start).line + 1).toBe(12);
    const info = findingsOf(report, 'empirical-model');
    expect(info).toHaveLength(1);
    expect(info[0].severity).toBe('info');
    expect(info[0].message).toContain('was not built: the state key could not be formed');
    expect(report.internalErrors).toEqual([]);
    expect(report.rollouts?.random?.episodes).toBe(1000);
  }, 60_000);

  it('a stateKey that returns an object: model-error naming what it returned', async () => {
    const report = await analyzeTs(walk(`  stateKey: (state: number) => ({ cell: state }),`), FAST_LIMITS);
    const errors = findingsOf(report, 'model-error');
    expect(errors).toHaveLength(1);
    expect(errors[0].message).toContain('stateKey(state) returned {"cell":0}; expected a string or a finite number');
    expect(findingsOf(report, 'empirical-model')[0].message).toContain('was not built');
    expect(report.internalErrors).toEqual([]);
  }, 60_000);

  it('a stateKey that returns NaN is not a key', async () => {
    const report = await analyzeTs(walk(`  stateKey: (state: number) => state / 0 - state / 0,`), FAST_LIMITS);
    expect(findingsOf(report, 'model-error')[0].message).toContain('returned NaN');
    expect(findingsOf(report, 'empirical-model')).toHaveLength(1);
  }, 60_000);

  it('continuous states without a key function: more keys than the cap, an info finding and no model', async () => {
    const report = await analyzeTs(walk('', 'state + (action === "right" ? rng() : -rng())'), {
      thresholds: { 'empirical-model.keyCap': 500 },
    });
    expect(findingsOf(report, 'model-error')).toEqual([]);
    const info = findingsOf(report, 'empirical-model');
    expect(info).toHaveLength(1);
    expect(info[0].message).toContain('more than 500 distinct state keys were sampled');
    expect(report.findings.filter((f) => f.fromSamples)).toEqual([]);
    expect(report.rollouts?.random?.episodes).toBe(1000);
  }, 60_000);

  it('a key function that maps the same continuous walk to grid cells builds the model', async () => {
    const report = await analyzeTs(
      walk('  stateKey: (state: number) => Math.floor(state),', 'state + (action === "right" ? rng() : -rng())'),
      {
        thresholds: { 'empirical-model.keyCap': 500 },
      },
    );
    expect(findingsOf(report, 'empirical-model')).toEqual([]);
    expect(report.empirical?.model.stateCount).toBe(6);
    expect(report.findings.filter((f) => f.severity !== 'info')).toEqual([]);
    // Learning groups states by the same key: the cells 0 to 5, never the raw positions.
    const learning = report.rollouts?.learning;
    expect(learning?.distinctKeys).toBeGreaterThan(1);
    expect(learning?.distinctKeys).toBeLessThanOrEqual(6);
    expect(learning?.path.keys.every((key) => /^\d$/.test(key))).toBe(true);
  }, 60_000);

  it('a stateKey that throws is reported once, by the rollouts, and learning does not repeat it', async () => {
    const report = await analyzeTs(
      walk(`  stateKey(state: number) {
    if (state > 2) throw new Error('no key past 2');
    return state;
  },`),
      FAST_LIMITS,
    );
    expect(findingsOf(report, 'model-error')).toHaveLength(1);
    expect(report.rollouts?.learning).toBeUndefined();
    expect(report.internalErrors).toEqual([]);
  }, 60_000);
});
