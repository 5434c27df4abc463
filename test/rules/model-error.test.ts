/**
 * model-error: model code that throws, returns a malformed value, or does not return; the finding
 * names the call and points at the line that failed, and the analysis stops rather than guess.
 */
import { expect } from 'vitest';
import { testRule } from '../helpers/rule-tester';
import { counterSpec, FAST_LIMITS, TEST_CALL_TIMEOUT_MS } from '../typescript/ts-specs';

const ok = `    return [{ state: { n: s.n + 1 }, probability: 1, reward: -1 }];`;

testRule('model-error', {
  valid: [
    {
      name: 'a model whose calls all return well-formed outcomes',
      spec: { typescript: counterSpec(ok) },
      config: FAST_LIMITS,
    },
  ],
  invalid: [
    {
      name: 'outcomes throws an Error',
      spec: { typescript: counterSpec(`    if (s.n === 2) throw new Error('motor stalled');\n${ok}`) },
      config: FAST_LIMITS,
      findings: [{ message: /outcomes\(\{"n":2\}, "up"\) threw.*motor stalled/ }],
      check: (report) => expect(report.analysis).toBeUndefined(),
    },
    {
      name: 'an endless loop is stopped at the call timeout',
      spec: { typescript: counterSpec(`    while (s.n >= 0) {}\n    return [];`) },
      config: FAST_LIMITS,
      findings: [{ message: new RegExp(`did not return within ${TEST_CALL_TIMEOUT_MS} ms`) }],
    },
    {
      name: 'a sampled model that returns no state',
      spec: {
        typescript: `export default { discount: 0.9, start: 0, actions: () => ['go'], sample: () => ({ reward: 1 }) };`,
      },
      config: { rollouts: 10 },
      findings: [{ message: /the result is \{"reward":1\}; expected \{ state, reward, terminal\? \}/ }],
    },
  ],
});
