import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, test } from 'vitest';
import {
  FAST_LIMITS,
  TEST_CALL_TIMEOUT_MS,
  analyzeTs,
  counterSpec,
  findingsOf,
  lineContaining,
  lineOf,
  writeFolder,
} from '../typescript/ts-specs';

const ok = `    return [{ state: { n: s.n + 1 }, probability: 1, reward: -1 }];`;

/** Each hostile case must end in exactly the expected finding, and the process must live on. */
describe('hostile model code is contained and reported as model-error with the source line', () => {
  test('an endless loop is stopped at the call timeout and located at the loop', async () => {
    const text = counterSpec(`    let spins = 0;\n    while (s.n >= 0) { spins++; }\n    return [];`);
    const report = await analyzeTs(text, FAST_LIMITS);
    const [finding, ...rest] = findingsOf(report, 'model-error');
    expect(rest).toEqual([]);
    expect(finding.message).toContain(`outcomes({"n":0}, "up") did not return within ${TEST_CALL_TIMEOUT_MS} ms`);
    expect(lineOf(report, finding)).toBe(lineContaining(text, 'while (s.n >= 0)'));
    expect(report.analysis).toBeUndefined();
  });

  test('an endless loop in an imported file is located there', async () => {
    const helper = `export function settle(n: number): number {\n  let x = n;\n  while (x >= 0) x = (x + 1) % 7;\n  return x;\n}\n`;
    const text = counterSpec(
      `    return [{ state: { n: settle(s.n) }, probability: 1, reward: -1 }];`,
      `import { settle } from './physics';`,
    );
    const report = await analyzeTs(text, FAST_LIMITS, {}, { 'physics.ts': helper });
    const [finding] = findingsOf(report, 'model-error');
    expect(finding.message).toContain(`did not return within ${TEST_CALL_TIMEOUT_MS} ms`);
    expect(finding.message).toContain('(at physics.ts:3:');
    expect(report.text.slice(finding.span.start, finding.span.end)).toBe('outcomes');
  });

  test('a memory bomb hits the heap limit and is reported with the call that ran', async () => {
    const text = counterSpec(`    const hoard = [];\n    for (;;) hoard.push({ i: hoard.length, pad: [1, 2, 3, 4] });`);
    // A generous call timeout: on a busy machine filling 64 MB can take longer than the usual limit.
    const report = await analyzeTs(text, {
      thresholds: { 'model-error.callTimeoutMs': 30_000, 'model-error.memoryMb': 64 },
    });
    const [finding] = findingsOf(report, 'model-error');
    expect(finding.message).toContain('outcomes({"n":0}, "up") ran out of memory (the limit is 64 MB of heap)');
    // The sandbox's loop check stops the bomb inside its loop, so the finding points at that line.
    expect(lineOf(report, finding)).toBe(lineContaining(text, 'hoard.push'));
  });

  test('process.exit is refused and located', async () => {
    const text = counterSpec(`    process.exit(3);\n    return [];`);
    const report = await analyzeTs(text, FAST_LIMITS);
    const [finding] = findingsOf(report, 'model-error');
    expect(finding.message).toContain('tried to end the process: called process.exit(3)');
    expect(lineOf(report, finding)).toBe(lineContaining(text, 'process.exit(3)'));
  });

  test('a thrown error names the state and the throw line, also in an imported file', async () => {
    const text = counterSpec(`    if (s.n === 2) throw new RangeError('no stock left');\n${ok}`);
    const report = await analyzeTs(text, FAST_LIMITS);
    const [finding] = findingsOf(report, 'model-error');
    expect(finding.message).toContain('outcomes({"n":2}, "up") threw RangeError: no stock left');
    expect(lineOf(report, finding)).toBe(lineContaining(text, 'throw new RangeError'));

    const helper = `export function next(n: number): number {\n  if (n === 1) throw new Error('helper failed');\n  return n + 1;\n}\n`;
    const viaImport = counterSpec(
      `    return [{ state: { n: next(s.n) }, probability: 1, reward: -1 }];`,
      `import { next } from './helper';`,
    );
    const imported = await analyzeTs(viaImport, FAST_LIMITS, {}, { 'helper.ts': helper });
    const [elsewhere] = findingsOf(imported, 'model-error');
    expect(elsewhere.message).toContain('threw Error: helper failed (at helper.ts:2:');
    expect(imported.text.slice(elsewhere.span.start, elsewhere.span.end)).toBe('outcomes');
  });

  test('malformed return values are named precisely', async () => {
    const cases: Array<[string, string]> = [
      [
        `    return [{ state: { n: s.n + 1 }, probability: '1', reward: -1 }];`,
        'outcome 0 has probability "1"; expected a number',
      ],
      // A misnamed field: the outcome's own field names show which.
      [
        `    return [{ next: { n: s.n + 1 }, p: 1, reward: -1 }];`,
        'outcome 0 has no probability (its fields: next, p, reward); expected { state, probability, reward }',
      ],
      [
        `    return { state: { n: s.n + 1 }, probability: 1, reward: -1 };`,
        'the returned outcome list is {"probability":1,"reward":-1,"state":{"n":1}}; expected an array',
      ],
      [
        `    return [{ state: new Map(), probability: 1, reward: -1 }];`,
        "outcome 0's state is a Map; states must be plain JSON values",
      ],
      [`    return Promise.resolve([]);`, 'is a Promise; model functions must return their value synchronously'],
      [
        `    return [{ state: { n: s.n + 1 }, probability: 1, reward: { speed: 1 } }];`,
        'names the reward term "speed", which rewardTerms does not declare',
      ],
    ];
    for (const [body, expected] of cases) {
      const text = counterSpec(body).replace(
        "name: 'counter',",
        "name: 'counter',\n  rewardTerms: { time: { direction: 'penalty' } },",
      );
      const report = await analyzeTs(text, FAST_LIMITS);
      const [finding] = findingsOf(report, 'model-error');
      expect(finding?.message, body).toContain('outcomes({"n":0}, "up") returned a malformed value:');
      expect(finding.message).toContain(expected);
    }
  });

  test('changing the state that was passed in fails at the assignment (states are frozen)', async () => {
    const text = counterSpec(`    s.n = s.n + 1;\n    return [{ state: s, probability: 1, reward: -1 }];`);
    const report = await analyzeTs(text, FAST_LIMITS);
    const [finding] = findingsOf(report, 'model-error');
    expect(finding.message).toContain("Cannot assign to read only property 'n'");
    expect(lineOf(report, finding)).toBe(lineContaining(text, 's.n = s.n + 1'));
  });

  test('a NaN reward is a non-finite-reward finding, in enumerable and in sampled models', async () => {
    const enumerable = await analyzeTs(
      counterSpec(`    return [{ state: { n: s.n + 1 }, probability: 1, reward: s.n === 1 ? 0 / 0 : -1 }];`),
      FAST_LIMITS,
    );
    const [finding] = findingsOf(enumerable, 'non-finite-reward');
    expect(finding.severity).toBe('error');
    expect(finding.message).toContain(
      'outcomes({"n":1}, "up") returned the reward NaN in outcome 0: every return that includes it is undefined',
    );
    const sampled = await analyzeTs(
      `export default { discount: 0.9, start: 0, actions: () => ['go'],
  sample: (s, a, rng) => ({ state: s + 1, reward: rng() < 0.1 ? Infinity : 1, terminal: s >= 4 ? 'goal' : undefined }) };`,
      { ...FAST_LIMITS, rollouts: 200 },
    );
    const [inSample] = findingsOf(sampled, 'non-finite-reward');
    expect(inSample.message).toMatch(
      /sample\(\d+, "go"\) in rollout episode \d+, step \d+ returned the reward Infinity: every return that includes it is undefined/,
    );
    expect(inSample.message).toMatch(/; \d+ of 200 rollouts got a non-finite reward and are left out of the estimates/);
    expect(sampled.rollouts?.random?.episodes).toBeLessThan(200);
  });

  test('Math.random is found by reading the source and counted while running', async () => {
    const text = counterSpec(`    return [{ state: { n: s.n + 1 }, probability: 1, reward: Math.random() }];`);
    const report = await analyzeTs(text, FAST_LIMITS);
    const findings = findingsOf(report, 'unseeded-randomness');
    expect(findings).toHaveLength(1);
    expect(findings[0].message).toMatch(
      /^Math\.random is a random source Episcope cannot seed \(called \d+ times while the model ran\)/,
    );
    expect(lineOf(report, findings[0])).toBe(lineContaining(text, 'Math.random()'));

    // In an imported file only the run sees it; the finding says where the first call was.
    const helper = `export const jitter = () => Math.random() * 0;\n`;
    const viaImport = counterSpec(
      `    return [{ state: { n: s.n + 1 }, probability: 1, reward: -1 + jitter() }];`,
      `import { jitter } from './noise';`,
    );
    const imported = await analyzeTs(viaImport, FAST_LIMITS, {}, { 'noise.ts': helper });
    const [dynamic] = findingsOf(imported, 'unseeded-randomness');
    expect(dynamic.message).toMatch(
      /^Math\.random was called \d+ times while the model ran \(first call at noise\.ts:1:/,
    );
  });

  test('an error raised outside any call (an unhandled rejection at load) is contained and reported', async () => {
    const text = counterSpec(ok, `Promise.reject(new Error('late failure'));`);
    const report = await analyzeTs(text, FAST_LIMITS);
    const [finding] = findingsOf(report, 'model-error');
    expect(finding.message).toContain('failed outside a model call: Error: late failure');
    expect(report.analysis).toBeUndefined();
  });

  test('with exec off the code never runs, and the static checks still do', async () => {
    const folder = writeFolder({});
    const marker = join(folder, 'ran.txt');
    const text = `import { writeFileSync } from 'node:fs';\nwriteFileSync(${JSON.stringify(marker)}, 'ran');\n${counterSpec(`    return [{ state: { n: s.n + 1 }, probability: 1, reward: Math.random() }];`)}`;
    const report = await analyzeTs(text, FAST_LIMITS, { exec: false });
    expect(existsSync(marker)).toBe(false);
    expect(report.spec.typescript?.executed).toBe(false);
    expect(findingsOf(report, 'unseeded-randomness')).toHaveLength(1);
    expect(report.notAnalysed).toContain('not run');
    // The same spec with exec on runs it, and the sandbox refuses the write (test/sandbox/boundary.test.ts has more).
    const ran = await analyzeTs(text, FAST_LIMITS);
    expect(ran.spec.typescript?.executed).toBe(true);
    expect(findingsOf(ran, 'model-error')[0].message).toContain(
      'loading the spec threw Error: Access to this API has been restricted',
    );
    expect(existsSync(marker)).toBe(false);
  });

  test('a model that is slow but never hangs is stopped at the job time limit', async () => {
    const text = counterSpec(
      `    const until = Date.now() + 40;\n    while (Date.now() < until) {}\n    return [{ state: { n: s.n + 1 }, probability: 1, reward: -1 }];`,
    ).replace('s.n >= 3', 's.n >= 1000');
    // The job limit protects against a model that keeps making progress forever (1000 calls of 40 ms
    // here). It must be longer than a worker start on a loaded machine, or the load phase is blamed.
    const report = await analyzeTs(text, {
      thresholds: { ...FAST_LIMITS.thresholds, 'model-error.jobTimeoutMs': 4000 },
    });
    const [finding] = findingsOf(report, 'model-error');
    expect(finding.message).toContain("was still running when the job's time limit of 4 s ran out");
    expect(finding.message).toMatch(/^outcomes\(\{"n":\d+\}, "up"\)/);
  });

  test('an unsaved document in a folder that does not exist still runs', async () => {
    const { analyzeFile } = await import('../../server/src/analyze');
    const text = counterSpec(ok);
    const report = await analyzeFile('/no/such/folder/untitled.mdp.ts', text, {});
    expect(report.model?.stateCount).toBe(4);
  });

  test('after every hostile case the process lives on and analyses a good model', async () => {
    const report = await analyzeTs(counterSpec(ok), FAST_LIMITS);
    expect(report.findings.filter((f) => f.severity === 'error')).toEqual([]);
    expect(report.model?.stateCount).toBe(4);
  });
});

describe('sampled models: malformed results', () => {
  test('an async sample() and a missing state are named', async () => {
    const asyncSample = await analyzeTs(
      `export default { discount: 0.9, start: 0, actions: () => ['go'], async sample(s) { return { state: s, reward: 1 }; } };`,
      FAST_LIMITS,
    );
    expect(findingsOf(asyncSample, 'model-error')[0].message).toContain(
      'sample(0, "go") in rollout episode 0, step 0 returned a malformed value: the result is a Promise',
    );
    const noState = await analyzeTs(
      `export default { discount: 0.9, start: 0, actions: () => ['go'], sample: (s) => ({ reward: 1 }) };`,
      FAST_LIMITS,
    );
    expect(findingsOf(noState, 'model-error')[0].message).toContain(
      'the result is {"reward":1}; expected { state, reward, terminal? }',
    );
  });

  test('an enumerable model with a start function is told to give a state value', async () => {
    const report = await analyzeTs(
      `export default { discount: 0.9, start: (rng) => 0, actions: () => ['go'], outcomes: (s) => [{ state: s, probability: 1, reward: 0 }] };`,
      FAST_LIMITS,
    );
    expect(findingsOf(report, 'model-error')[0].message).toContain(
      'an enumerable model needs `start` as a state value',
    );
  });
});
