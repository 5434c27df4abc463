import { describe, expect, test } from 'vitest';
import { readTypeScriptSpec } from '../../server/src/load/typescript';

/** The text a span covers. */
function at(text: string, span: { start: number; end: number } | undefined): string | undefined {
  return span ? text.slice(span.start, span.end) : undefined;
}

const enumerable = `import { defineMdp } from 'episcope';

const GAMMA = 0.95;

export default defineMdp({
  name: 'shelf',
  objective: 'maximize',
  discount: GAMMA,
  horizon: 30,
  rewardTerms: { sales: { direction: 'bonus' }, holding: { direction: 'penalty' } },
  start: { stock: 2, day: 0 },
  actions: (state) => ['wait', 'order'],
  terminal(state) {
    return state.day >= 3 ? 'neutral' : undefined;
  },
  outcomes(state, action) {
    return [{ state: { ...state, day: state.day + 1 }, probability: 1, reward: { sales: 1, holding: -0.1 } }];
  },
});
`;

describe('static reading of TypeScript specs (ts-morph)', () => {
  test('reads literal fields with their ranges; defineMdp need not resolve', () => {
    const reading = readTypeScriptSpec(enumerable);
    const { spec } = reading;
    expect(reading.found).toBe(true);
    expect(reading.findings).toEqual([]);
    expect(spec.format).toBe('ts');
    expect(spec.name?.value).toBe('shelf');
    expect(at(enumerable, spec.name?.span)).toBe("'shelf'");
    expect(spec.objective).toBe('maximize');
    // A const of the same file is followed to its literal.
    expect(spec.discount?.value).toBe(0.95);
    expect(at(enumerable, spec.discount?.span)).toBe('0.95');
    expect(spec.horizon?.value).toBe(30);
    expect(spec.rewardTerms.map((t) => [t.name, t.direction])).toEqual([
      ['sales', 'bonus'],
      ['holding', 'penalty'],
    ]);
    // The start state's key is its canonical JSON: sorted keys.
    expect(spec.start).toEqual([{ state: '{"day":0,"stock":2}', probability: 1, span: expect.anything() }]);
    expect(at(enumerable, spec.start[0].span)).toBe('{ stock: 2, day: 0 }');
    const members = spec.typescript!.members;
    expect(at(enumerable, members.outcomes.nameSpan)).toBe('outcomes');
    expect(members.outcomes.isFunction).toBe(true);
    expect(members.actions.isFunction).toBe(true);
    expect(spec.typescript!.form).toBe('enumerable');
  });

  test('a plain object default export, and `export default spec` of a const, are read too', () => {
    const plain = `export default { discount: 0.5, start: 0, actions: () => ['a'], sample: (s, a, rng) => ({ state: s, reward: 1 }) };`;
    const viaConst = `const spec = defineMdp({ discount: 1, start: 'x', actions: () => ['a'], outcomes: () => [] });\nexport default spec;`;
    expect(readTypeScriptSpec(plain).spec.discount?.value).toBe(0.5);
    expect(readTypeScriptSpec(plain).spec.typescript!.form).toBe('sampled');
    const reading = readTypeScriptSpec(viaConst);
    expect(reading.spec.discount?.value).toBe(1);
    expect(reading.spec.start[0].state).toBe('"x"');
  });

  test('wrong literal values are schema findings at the value', () => {
    const text = `export default defineMdp({ discount: 1.5, horizon: 2.5, objective: 'maximise', start: 0, actions: () => [], outcomes: () => [] });`;
    const reading = readTypeScriptSpec(text);
    const messages = reading.findings.map((f) => [f.rule, at(text, f.span), f.message]);
    expect(messages).toEqual([
      ['schema', '1.5', 'discount must be a number between 0 and 1, not 1.5'],
      ['schema', '2.5', 'horizon must be a whole number of steps of at least 1, not 2.5'],
      ['schema', "'maximise'", 'objective must be "maximize" or "minimize", not "maximise"'],
    ]);
  });

  test('non-literal fields are left to the running code', () => {
    const text = `const d = compute();\nexport default defineMdp({ discount: d, start: makeStart(), actions: () => ['a'], outcomes: () => [] });`;
    const reading = readTypeScriptSpec(text);
    expect(reading.findings).toEqual([]);
    expect(reading.spec.discount).toBeUndefined();
    expect([...reading.dynamicFields].sort()).toEqual(['discount', 'start']);
  });

  test('no default export, missing members, unknown members and syntax errors are findings, never throws', () => {
    expect(readTypeScriptSpec('const x = 1;').findings.map((f) => f.message)).toEqual([
      'the spec has no default export of an object: write `export default defineMdp({ ... })`',
    ]);
    const missing = readTypeScriptSpec(`export default defineMdp({ discount: 0.9, start: 0, action: () => [] });`);
    expect(missing.findings.map((f) => f.message)).toEqual([
      expect.stringContaining('unknown member "action"'),
      'the spec has no actions(state) function',
      expect.stringContaining('neither outcomes(state, action)'),
    ]);
    const broken = readTypeScriptSpec(`export default defineMdp({ discount: 0.9, start: 0 `);
    expect(broken.syntaxErrors).toBe(true);
    expect(broken.findings[0].message).toMatch(/^syntax error: /);
    expect(broken.findings[0].rule).toBe('syntax');
    for (const text of ['', '}}}{{{', 'export default 5;', '\u0000\uffff', 'export default defineMdp(...args);']) {
      expect(() => readTypeScriptSpec(text)).not.toThrow();
    }
  });

  test('finds unseeded randomness and clock reads in the source', () => {
    const text = [
      "import { randomInt } from 'node:crypto';",
      "import * as nodeCrypto from 'crypto';",
      'export default defineMdp({ discount: 0.9, start: 0, actions: () => ["a"],',
      '  sample(s, a, rng) {',
      '    const u = Math.random() + randomInt(3) + nodeCrypto.randomBytes(2)[0] + Date.now() + globalThis.performance.now();',
      '    const t = new Date();',
      '    const fine = rng() + new Date(0).getTime() + Math.max(1, 2);',
      '    return { state: s, reward: u };',
      '  },',
      '});',
    ].join('\n');
    const sites = readTypeScriptSpec(text).spec.typescript!.staticRandomness.map((s) => [s.api, at(text, s.span)]);
    expect(sites).toEqual([
      ['Math.random', 'Math.random'],
      ['crypto.randomInt', 'randomInt'],
      ['crypto.randomBytes', 'nodeCrypto.randomBytes'],
      ['Date.now', 'Date.now'],
      ['performance.now', 'globalThis.performance.now'],
      ['new Date()', 'new Date()'],
    ]);
  });
});
