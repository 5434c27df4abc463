/**
 * The JSON spec loader: the three forms of `to`, list `from`/`action`, rewards, start forms,
 * JSONC, and bad input of every kind (never a throw, always a positioned `schema` finding whose
 * span is the exact offending text).
 */
import Ajv2020 from 'ajv/dist/2020';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import schemaDocument from '../../schemas/mdp.schema.json';
import { MAX_DOCUMENT_LENGTH, MAX_NESTING_DEPTH, MAX_SCHEMA_FINDINGS, parseJsonSpec } from '../../server/src/load/json';
import type { Span } from '../../server/src/load/types';

function load(text: string) {
  const result = parseJsonSpec(text);
  const at = (span: Span): string => text.slice(span.start, span.end);
  return { ...result, at, messages: result.findings.map((f) => `${at(f.span)} | ${f.message}`) };
}

const base = (transitions: string, extra = ''): string => `{
  "discount": 0.9,
  "start": "a",
  "actions": ["go", "stay"],
  "states": { "a": {}, "b": {}, "goal": { "terminal": "goal" } },${extra}
  "transitions": [
    ${transitions}
  ]
}`;

describe('the three forms of "to"', () => {
  it('reads a state id as one outcome of probability 1, spanning the id', () => {
    const r = load(base(`{ "from": "a", "action": "go", "to": "b", "reward": -1 }`));
    expect(r.findings).toEqual([]);
    const [t] = r.spec.transitions;
    expect(t.outcomes).toHaveLength(1);
    expect(t.outcomes[0]).toMatchObject({ state: 'b', probability: 1 });
    expect(r.at(t.outcomes[0].stateSpan)).toBe('"b"');
    expect(r.at(t.toSpan)).toBe('"b"');
    expect(t.outcomes[0].reward).toEqual([{ term: null, value: -1, span: expect.anything() }]);
    expect(r.at(t.outcomes[0].reward[0].span)).toBe('-1');
  });

  it('reads a map as outcomes with key and value spans', () => {
    const r = load(base(`{ "from": "a", "action": "go", "to": { "b": 0.25, "goal": 0.75 }, "reward": 2 }`));
    expect(r.findings).toEqual([]);
    const outcomes = r.spec.transitions[0].outcomes;
    expect(outcomes.map((o) => [o.state, o.probability])).toEqual([
      ['b', 0.25],
      ['goal', 0.75],
    ]);
    expect(r.at(outcomes[0].stateSpan)).toBe('"b"');
    expect(r.at(outcomes[0].probabilitySpan)).toBe('0.25');
    expect(r.at(outcomes[1].span)).toBe('"goal": 0.75');
    expect(outcomes.every((o) => o.reward[0].value === 2)).toBe(true);
  });

  it('reads a list of outcomes; an outcome reward replaces the transition reward', () => {
    const r = load(
      base(`{ "from": "a", "action": "go", "reward": -1, "to": [
        { "state": "b", "probability": 0.5 },
        { "state": "goal", "probability": 0.5, "reward": { "bonus": 10, "fuel": -0.5 } } ] }`),
    );
    expect(r.findings).toEqual([]);
    const [stay, win] = r.spec.transitions[0].outcomes;
    expect(stay.reward.map((p) => [p.term, p.value])).toEqual([[null, -1]]);
    expect(win.reward.map((p) => [p.term, p.value])).toEqual([
      ['bonus', 10],
      ['fuel', -0.5],
    ]);
    expect(r.at(win.reward[1].span)).toBe('-0.5');
    expect(r.at(win.probabilitySpan)).toBe('0.5');
    expect(r.at(win.stateSpan)).toBe('"goal"');
    expect(r.at(win.span).startsWith('{ "state": "goal"')).toBe(true);
  });

  it('leaves a missing reward as no reward parts (reward 0)', () => {
    const r = load(base(`{ "from": "a", "action": "go", "to": "b" }`));
    expect(r.spec.transitions[0].outcomes[0].reward).toEqual([]);
  });
});

describe('lists in "from" and "action"', () => {
  it('expands into one transition per combination, sharing sourceIndex and outcomes', () => {
    const r = load(
      base(`{ "from": "a", "action": "go", "to": "b" },
    { "from": ["a", "b"], "action": ["go", "stay"], "to": "goal", "reward": 1 }`),
    );
    expect(r.findings).toEqual([]);
    const expanded = r.spec.transitions.filter((t) => t.sourceIndex === 1);
    expect(expanded.map((t) => `${t.from}/${t.action}`)).toEqual(['a/go', 'a/stay', 'b/go', 'b/stay']);
    expect(new Set(expanded.map((t) => t.outcomes)).size).toBe(1);
    expect(r.at(expanded[2].fromSpan)).toBe('"b"');
    expect(r.at(expanded[1].actionSpan)).toBe('"stay"');
    expect(r.spec.transitions[0].sourceIndex).toBe(0);
  });
});

describe('top-level fields', () => {
  it('reads start as an id, a uniform list and a map', () => {
    const asId = load(base('', '')).spec.start;
    expect(asId).toEqual([{ state: 'a', probability: 1, span: expect.anything() }]);
    const asList = load(base('').replace('"start": "a"', '"start": ["a", "b", "goal", "b2"]')).spec.start;
    expect(asList.map((e) => e.probability)).toEqual([0.25, 0.25, 0.25, 0.25]);
    const text = base('').replace('"start": "a"', '"start": { "a": 0.3, "b": 0.7 }');
    const asMap = load(text);
    expect(asMap.spec.start.map((e) => [e.state, e.probability])).toEqual([
      ['a', 0.3],
      ['b', 0.7],
    ]);
    expect(asMap.at(asMap.spec.start[1].probabilitySpan!)).toBe('0.7');
    expect(asMap.at(asMap.spec.start[1].span)).toBe('"b"');
  });

  it('reads objective, horizon, reward terms, state action sets, terminals and shaping potential', () => {
    const text = `{
      "$schema": "../schemas/mdp.schema.json",
      "name": "lift",
      "objective": "minimize",
      "discount": 1,
      "horizon": 40,
      "start": "a",
      "rewardTerms": { "energy": { "direction": "penalty" }, "progress": { "shaping": true } },
      "states": { "a": { "actions": ["up"] }, "top": { "terminal": "neutral" } },
      "shaping": { "potential": { "a": 1.5 } },
      "transitions": [ { "from": "a", "action": "up", "to": "top", "reward": { "energy": 2 } } ]
    }`;
    const r = load(text);
    expect(r.findings).toEqual([]);
    const s = r.spec;
    expect(s.name?.value).toBe('lift');
    expect(s.objective).toBe('minimize');
    expect(s.discount?.value).toBe(1);
    expect(s.horizon?.value).toBe(40);
    expect(s.rewardTerms).toEqual([
      { name: 'energy', direction: 'penalty', shaping: false, span: expect.anything() },
      { name: 'progress', direction: 'either', shaping: true, span: expect.anything() },
    ]);
    expect(s.states[0].actions?.map((a) => a.value)).toEqual(['up']);
    expect(s.states[1].terminal).toBe('neutral');
    expect(r.at(s.states[1].terminalSpan!)).toBe('"neutral"');
    expect(s.potential).toEqual([{ state: 'a', value: 1.5, span: expect.anything(), valueSpan: expect.anything() }]);
    expect(r.at(s.potential[0].valueSpan!)).toBe('1.5');
    expect(s.actions).toEqual([]);
    expect(s.actionsSpan).toBeUndefined();
  });

  it('reads the format example of the design brief without findings', () => {
    // The spec format example of the design brief ("The spec format, version 1"), comments included.
    const text = `{
  "$schema": "…/schemas/mdp.schema.json",       // optional
  "name": "parcel-drone",
  "objective": "maximize",      // "maximize" (rewards) or "minimize" (costs); default "maximize"
  "discount": 0.98,             // required, 0 <= discount <= 1
  "horizon": 120,               // optional time limit: the episode is cut after this many steps
  "start": "depot",             // a state id, an array of ids (uniform), or {"id": probability, …}
  "actions": ["north", "south", "east", "west", "hover"],   // the default action set of every state
  "rewardTerms": {              // optional: named reward components
    "delivery": { "direction": "bonus" },          // "bonus" (>= 0), "penalty" (<= 0) or "either"
    "battery":  { "direction": "penalty" },
    "progress": { "direction": "either", "shaping": true }   // shaping terms must be potential-based
  },
  "states": {                   // every state must be declared (typos are the classic bug)
    "depot": {},
    "roof":  { "actions": ["hover", "east"] },     // a state may narrow the action set
    "drop":  { "terminal": "goal" },               // terminal kinds: "goal", "failure", "neutral"
    "crash": { "terminal": "failure" }
  },
  "shaping": { "potential": { "depot": 0, "roof": 2.5 } },   // optional potential-based shaping
  "transitions": [
    { "from": "depot", "action": "north", "to": "roof", "reward": -1 },
    { "from": "roof", "action": "east", "to": { "drop": 0.9, "crash": 0.1 }, "reward": -1 },
    { "from": "roof", "action": "hover",
      "to": [ { "state": "roof", "probability": 0.8, "reward": { "battery": -0.2 } },
              { "state": "crash", "probability": 0.2, "reward": { "battery": -0.2 } } ] }
  ]
}`;
    const r = load(text);
    expect(r.messages).toEqual([]);
    expect(r.spec.states.map((s) => s.id)).toEqual(['depot', 'roof', 'drop', 'crash']);
    expect(r.spec.transitions).toHaveLength(3);
    expect(r.spec.transitions[2].outcomes[1]).toMatchObject({ state: 'crash', probability: 0.2 });
  });
});

describe('JSONC', () => {
  it('accepts line and block comments and trailing commas', () => {
    const text = `// a spec with comments
{
  /* discount of the task */ "discount": 0.5,
  "start": "a",
  "actions": ["go",],
  "states": { "a": {}, "goal": { "terminal": "goal" }, },
  "transitions": [ { "from": "a", "action": "go", "to": "goal", }, ], // trailing
}`;
    const r = load(text);
    expect(r.messages).toEqual([]);
    expect(r.spec.discount?.value).toBe(0.5);
    expect(r.at(r.spec.discount!.span)).toBe('0.5');
    expect(r.spec.transitions).toHaveLength(1);
  });
});

describe('bad input: never a throw, always a positioned schema finding', () => {
  it('reports a syntax error where it is', () => {
    const text = '{ "discount": 0.9 "start": "a" }';
    const r = load(text);
    const syntax = r.findings.filter((f) => f.message.startsWith('invalid JSON'));
    expect(syntax).toHaveLength(1);
    expect(syntax[0].rule).toBe('schema');
    expect(syntax[0].severity).toBe('error');
    expect(syntax[0].message).toContain("','");
    expect(r.at(syntax[0].span)).toBe('"start"');
    // What could be read still is.
    expect(r.spec.discount?.value).toBe(0.9);
  });

  it('reports an unclosed document at its end and keeps what was typed so far', () => {
    const text = base(`{ "from": "a", "action": "go", "to": "goal" },
    { "from": "b", "action": "go", "to": `).replace(/\s*\]\s*\}$/, '');
    const r = load(text);
    expect(r.findings.length).toBeGreaterThan(0);
    expect(r.findings.every((f) => f.span.start >= 0 && f.span.end <= text.length && f.span.end > f.span.start)).toBe(
      true,
    );
    expect(r.spec.states.map((s) => s.id)).toEqual(['a', 'b', 'goal']);
    expect(r.spec.transitions.map((t) => [t.from, Boolean(t.incomplete)])).toEqual([
      ['a', false],
      ['b', true],
    ]);
  });

  it('reports an empty document', () => {
    for (const text of ['', '   \n  ']) {
      const r = load(text);
      expect(r.findings).toHaveLength(1);
      expect(r.findings[0].message).toContain('empty');
    }
  });

  it('reports a root that is not an object', () => {
    const r = load('[1, 2]');
    expect(r.messages).toEqual([expect.stringMatching(/^\[1, 2\] \| the spec must be an object, not a list/)]);
  });

  it('reports wrong types at the value, with the path and what was expected', () => {
    const r = load(base(`{ "from": "a", "action": "go", "to": 7 }`).replace('"discount": 0.9', '"discount": "0.9"'));
    expect(r.messages).toContain(
      '"0.9" | discount must be a number, not the string "0.9" (The discount factor, from 0 to 1)',
    );
    const to = r.findings.find((f) => f.message.startsWith('transitions[0].to'));
    expect(to && r.at(to.span)).toBe('7');
    expect(to?.message).toContain('must be a string, an object or a list, not 7');
  });

  it('reports an unknown field at its key, suggesting the closest known one', () => {
    const r = load(base(`{ "from": "a", "action": "go", "too": "b" }`));
    const unknown = r.findings.find((f) => f.message.includes('unknown property'));
    expect(unknown && r.at(unknown.span)).toBe('"too"');
    expect(unknown?.message).toMatch(
      /^unknown property "too" in transitions\[0\]; did you mean "to"\? It is required \(the outcomes: /,
    );
    // One misnamed property is one mistake: the missing "to" is part of the same finding.
    expect(r.findings).toHaveLength(1);
  });

  it('reports an unknown property with the required one it lacks as one finding', () => {
    const r = load(base(`{ "from": "a", "action": "go", "next": "b" }`));
    expect(r.messages).toEqual([
      '"next" | unknown property "next" in transitions[0], which is missing the required property "to" (the outcomes: a state id (probability 1), a map from state id to probability, or a list of outcomes {state, probability, reward}): if "next" is meant as "to", rename it',
    ]);
    const several = load(base(`{ "state": "a", "act": "go", "to": "b" }`));
    expect(several.messages).toEqual([
      '"state" | transitions[0] has the unknown properties "state" and "act" and lacks the required "from" and "action"; its properties are from, action, to, reward',
    ]);
    // Without a missing property, each unknown one is its own finding.
    expect(load(base(`{ "from": "a", "action": "go", "to": "b", "note": 1, "notes": 2 }`)).findings).toHaveLength(2);
  });

  it('reports one outcome object written without the list brackets once, not as states named "state" and "probability"', () => {
    const r = load(base(`{ "from": "a", "action": "go", "to": { "state": "b", "probability": 1, "reward": -1 } }`));
    expect(r.messages).toEqual([
      '{ "state": "b", "probability": 1, "reward": -1 } | transitions[0].to is written as one outcome {state, probability, reward}; the outcomes are a list, so put it in brackets: "to": [ { "state": …, "probability": … } ], or for a single next state simply "to": "b"',
    ]);
    expect(r.spec.transitions[0]).toMatchObject({ outcomes: [], incomplete: true });
    // A spec that really has a state named "state" keeps the map form.
    const named = load(base(`{ "from": "a", "action": "go", "to": { "state": 1 } }`).replace('"b": {}', '"state": {}'));
    expect(named.findings).toEqual([]);
    expect(named.spec.transitions[0].outcomes.map((o) => o.state)).toEqual(['state']);
  });

  it('reports a probability that is not a number', () => {
    const r = load(base(`{ "from": "a", "action": "go", "to": { "b": "0.5", "goal": 0.5 } }`));
    expect(r.messages).toEqual([
      '"0.5" | transitions[0].to.b must be a number, not the string "0.5" (A probability, from 0 to 1)',
    ]);
  });

  it('keeps the state and action a transition without a readable from or action seems to be about', () => {
    const typo = load(base(`{ "form": "a", "action": "go", "to": "b" }`));
    expect(typo.spec.transitions).toEqual([]);
    expect(typo.spec.unreadTransitions).toEqual([{ from: ['a'], action: ['go'], span: expect.anything() }]);
    expect(load(base(`{ "from": "b", "acton": "stay", "to": "b" }`)).spec.unreadTransitions).toEqual([
      { from: ['b'], action: ['stay'], span: expect.anything() },
    ]);
    // The from value names no declared state: any state with that action may be the one meant.
    expect(load(base(`{ "form": "nowhere", "action": "go", "to": "b" }`)).spec.unreadTransitions).toEqual([
      { from: undefined, action: ['go'], span: expect.anything() },
    ]);
    // Nothing at all tells the pair.
    expect(load(base(`{ "to": "b" }`)).spec.unreadTransitions).toBeUndefined();
  });

  it('reports a missing top-level field at the opening brace and a missing nested one at its parent key', () => {
    const r = load('{ "start": "a", "states": { "a": {} }, "transitions": [], "shaping": {} }');
    const discount = r.findings.find((f) => f.message.includes('"discount"'));
    expect(discount && r.at(discount.span)).toBe('{');
    expect(discount?.message).toContain('the spec is missing the required property "discount"');
    const potential = r.findings.find((f) => f.message.includes('"potential"'));
    expect(potential && r.at(potential.span)).toBe('"shaping"');
  });

  it('reports a value outside its allowed set, suggesting the closest', () => {
    const r = load(base('').replace('"terminal": "goal"', '"terminal": "gaol"'));
    expect(r.messages).toEqual([
      '"gaol" | states.goal.terminal must be "goal", "failure" or "neutral", not the string "gaol"; did you mean "goal"?',
    ]);
    // A misspelt kind leaves the state non-terminal.
    expect(r.spec.states.find((s) => s.id === 'goal')?.terminal).toBeUndefined();
  });

  it('reports a discount outside [0, 1], including one too large to represent', () => {
    const over = load(base('').replace('"discount": 0.9', '"discount": 1.5'));
    expect(over.messages).toEqual(['1.5 | discount is 1.5; it must be at most 1 (The discount factor, from 0 to 1)']);
    const huge = load(base('').replace('"discount": 0.9', '"discount": 1e400'));
    expect(huge.messages).toHaveLength(1);
    expect(huge.messages[0]).toMatch(
      /^1e400 \| discount is infinity \(the number is too large to represent\); it must be at most 1/,
    );
  });

  it('leaves a huge reward to non-finite-reward: no schema finding, the value is Infinity', () => {
    const r = load(base(`{ "from": "a", "action": "go", "to": "b", "reward": 1e400 }`));
    expect(r.findings).toEqual([]);
    expect(r.spec.transitions[0].outcomes[0].reward[0].value).toBe(Number.POSITIVE_INFINITY);
  });

  it('leaves probabilities outside [0, 1] to negative-probability', () => {
    const r = load(base(`{ "from": "a", "action": "go", "to": { "b": 1.2, "goal": -0.2 } }`));
    expect(r.findings).toEqual([]);
    expect(r.spec.transitions[0].outcomes.map((o) => o.probability)).toEqual([1.2, -0.2]);
  });

  it('reports a horizon that is not a whole number', () => {
    const r = load(base('').replace('"discount": 0.9', '"discount": 0.9, "horizon": 2.5'));
    expect(r.messages).toEqual([expect.stringMatching(/^2\.5 \| horizon must be a whole number, not 2\.5/)]);
  });

  it('reports a repeated entry of a list at the repetition', () => {
    const r = load(base('').replace('"actions": ["go", "stay"]', '"actions": ["go", "stay", "go"]'));
    expect(r.messages).toEqual(['"go" | actions lists the string "go" twice (entries 0 and 2); list each once']);
    expect(r.findings[0].span.start).toBe(r.at({ start: 0, end: r.findings[0].span.start }).length);
  });

  it('reports a repeated key at the one that is ignored (the last counts, as in JSON.parse)', () => {
    const text =
      '{ "discount": 0.9, "start": "a", "states": { "a": {}, "a": { "terminal": "goal" } }, "transitions": [] }';
    const r = load(text);
    expect(r.findings).toHaveLength(1);
    expect(r.findings[0].span).toEqual({ start: text.indexOf('"a": {}'), end: text.indexOf('"a": {}') + 3 });
    expect(r.findings[0].message).toContain('states has the key "a" more than once');
    expect(r.spec.states).toHaveLength(1);
    expect(r.spec.states[0].terminal).toBe('goal');
  });

  it('finds a repeated key in a large object too', () => {
    const many = Array.from({ length: 40 }, (_, i) => `"s${i}": {}`).join(', ');
    const text = `{ "discount": 0.9, "start": "s0", "states": { ${many}, "s7": {} }, "transitions": [] }`;
    const r = load(text);
    expect(r.findings).toHaveLength(1);
    expect(r.findings[0].span.start).toBe(text.indexOf('"s7"'));
    expect(r.findings[0].message).toBe(
      'states has the key "s7" more than once; only the last one counts, so this one is ignored',
    );
  });

  it('reports empty ids at the key', () => {
    const r = load(base('').replace('"b": {}', '"": {}'));
    expect(r.messages).toEqual(['"" | states has an empty key; ids and names must not be empty']);
  });

  it('reports a reward term that rewardTerms does not declare', () => {
    const r = load(
      base(
        `{ "from": "a", "action": "go", "to": "b", "reward": { "batery": -1 } }`,
        `
  "rewardTerms": { "battery": { "direction": "penalty" } },`,
      ),
    );
    expect(r.messages).toEqual([
      '"batery" | reward term "batery" in transitions[0].reward is not declared in rewardTerms (did you mean "battery"?): its values count in the reward, but no term check (direction, shaping) applies to them',
    ]);
  });

  it('marks a transition whose outcomes cannot all be read as incomplete', () => {
    const r = load(
      base(`{ "from": "a", "action": "go", "to": [ { "state": "b" }, { "state": "goal", "probability": 1 } ] }`),
    );
    expect(r.messages).toEqual([
      expect.stringMatching(
        /^\{ "state": "b" \} \| transitions\[0\]\.to\[0\] is missing the required property "probability"/,
      ),
    ]);
    expect(r.spec.transitions[0].incomplete).toBe(true);
    expect(r.spec.transitions[0].outcomes.map((o) => o.state)).toEqual(['goal']);
  });

  it(`refuses nesting deeper than ${MAX_NESTING_DEPTH} levels (10,000 here) without a stack overflow`, () => {
    const deep = `{ "discount": ${'['.repeat(10_000)}${']'.repeat(10_000)} }`;
    const r = load(deep);
    expect(r.findings).toHaveLength(1);
    expect(r.findings[0].message).toContain(`nested more than ${MAX_NESTING_DEPTH} levels`);
    // The span is the first bracket beyond the limit: the root object is level 1.
    expect(r.findings[0].span.start).toBe(deep.indexOf('[') + MAX_NESTING_DEPTH - 1);
    expect(r.at(r.findings[0].span)).toBe('[');
    const unclosed = load('{'.repeat(10_000));
    expect(unclosed.findings).toHaveLength(1);
  });

  it('is not fooled by brackets inside strings and comments when counting depth', () => {
    const text = base('').replace(
      '"discount": 0.9',
      `"discount": 0.9, "name": "${'['.repeat(200)}" /* ${'{'.repeat(200)} */`,
    );
    expect(load(text).messages).toEqual([]);
  });

  it('refuses a document over the size limit (50 MB here) with one finding at its start', () => {
    const padding = ' '.repeat(50 * 1024 * 1024);
    const text = `{${padding}}`;
    expect(text.length).toBeGreaterThan(MAX_DOCUMENT_LENGTH);
    const r = parseJsonSpec(text);
    expect(r.findings).toHaveLength(1);
    expect(r.findings[0].span).toEqual({ start: 0, end: 1 });
    expect(r.findings[0].message).toMatch(/^the document is 50\.0 MB, more than the 16 MB/);
  });

  it(`caps the schema findings of a broken file at ${MAX_SCHEMA_FINDINGS} plus one summary`, () => {
    const items = Array.from({ length: 400 }, () => '{ "from": 1, "action": "go", "to": "b" }').join(',\n');
    const r = load(base(items));
    expect(r.findings).toHaveLength(MAX_SCHEMA_FINDINGS + 1);
    expect(r.findings[MAX_SCHEMA_FINDINGS].message).toBe(
      '200 more schema problems are not shown; fix the ones above first',
    );
  });

  it('never throws and keeps every span inside the text, for arbitrary text', () => {
    fc.assert(
      fc.property(fc.string({ maxLength: 200 }), (text) => {
        const r = parseJsonSpec(text);
        for (const f of r.findings) {
          expect(f.rule).toBe('schema');
          expect(f.span.start).toBeGreaterThanOrEqual(0);
          expect(f.span.end).toBeLessThanOrEqual(Math.max(1, text.length));
        }
      }),
      { numRuns: 300 },
    );
  });

  it('never throws for arbitrary JSON values, and reports every document that is not a valid spec', () => {
    const validate = new Ajv2020({ allErrors: true, strictNumbers: false, allowUnionTypes: true }).compile(
      schemaDocument,
    );
    fc.assert(
      fc.property(fc.jsonValue({ maxDepth: 5 }), (value) => {
        const text = JSON.stringify(value);
        const r = parseJsonSpec(text);
        if (!validate(value)) expect(r.findings.length).toBeGreaterThan(0);
      }),
      { numRuns: 300 },
    );
  });

  it('never throws for specs with one mutated character', () => {
    const text = base(`{ "from": "a", "action": "go", "to": { "b": 0.5, "goal": 0.5 }, "reward": { "x": 1 } },
    { "from": ["b"], "action": "go", "to": [ { "state": "goal", "probability": 1, "reward": 3 } ] }`);
    fc.assert(
      fc.property(
        fc.nat(text.length - 1),
        fc.constantFrom('', '"', '{', '}', '[', ']', ',', ':', '1', '-', 'x', ' '),
        (at, replacement) => {
          const mutated = text.slice(0, at) + replacement + text.slice(at + 1);
          const r = parseJsonSpec(mutated);
          for (const f of r.findings) expect(f.span.end).toBeLessThanOrEqual(mutated.length);
        },
      ),
      { numRuns: 400 },
    );
  });
});

describe('the schema file', () => {
  it('compiles under ajv strict mode (2020-12 draft)', () => {
    expect(() => new Ajv2020({ strict: true, allowUnionTypes: true }).compile(schemaDocument)).not.toThrow();
  });

  it('describes every property and definition, for editor hover and completion', () => {
    const undocumented: string[] = [];
    const visit = (node: unknown, path: string): void => {
      if (!node || typeof node !== 'object') return;
      const schema = node as Record<string, unknown>;
      for (const group of ['properties', '$defs'] as const) {
        const members = schema[group] as Record<string, Record<string, unknown>> | undefined;
        for (const [name, member] of Object.entries(members ?? {})) {
          if (typeof member.description !== 'string' || member.description.length < 10)
            undocumented.push(`${path}/${group}/${name}`);
          visit(member, `${path}/${group}/${name}`);
        }
      }
      if (schema.additionalProperties && typeof schema.additionalProperties === 'object')
        visit(schema.additionalProperties, `${path}/additionalProperties`);
    };
    visit(schemaDocument, '#');
    expect(undocumented).toEqual([]);
  });

  it('closes every object of the format to unknown fields', () => {
    const open: string[] = [];
    const visit = (node: unknown, path: string): void => {
      if (!node || typeof node !== 'object') return;
      const schema = node as Record<string, unknown>;
      if (schema.properties && schema.additionalProperties !== false) open.push(path);
      for (const group of ['properties', '$defs'] as const) {
        for (const [name, member] of Object.entries((schema[group] as Record<string, unknown>) ?? {}))
          visit(member, `${path}/${group}/${name}`);
      }
    };
    visit(schemaDocument, '#');
    expect(open).toEqual([]);
  });
});
