/**
 * Re-reading after an edit (load/json-reread.ts, JsonReadMemory in load/json.ts) against reading
 * the new text afresh: whatever the edit, the spec and the findings must be the same, and the
 * patched path must actually be taken for edits inside one value of a clean document.
 */
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { JsonReadMemory, parseJsonSpec } from '../../server/src/load/json';
import { NodeKind, NONE, readJsonTree } from '../../server/src/load/json-tree';
import { slipperyGridSpec } from '../../scripts/bench/generators';

const ROOT = join(__dirname, '..', '..');
const EXAMPLES = readdirSync(join(ROOT, 'examples'))
  .filter((name) => name.endsWith('.mdp.json'))
  .map((name) => ({ name, text: readFileSync(join(ROOT, 'examples', name), 'utf8') }));
const GRID = JSON.stringify(slipperyGridSpec({ size: 6, discount: 0.95 }), null, 1);

/** Reads `text` through `memory` and afresh, expects the same result, and says whether the memory was used. */
function expectSameRead(memory: JsonReadMemory, text: string): boolean {
  const before = memory.rereads;
  const again = parseJsonSpec(text, memory);
  const fresh = parseJsonSpec(text);
  expect(again.internalError).toBeUndefined();
  expect(again.spec).toEqual(fresh.spec);
  expect(again.findings).toEqual(fresh.findings);
  return memory.rereads > before;
}

/** The [start, end) of every value that is a number or a string but not a key. */
function valueRanges(text: string): Array<{ start: number; end: number; kind: NodeKind }> {
  const tree = readJsonTree(text, 64);
  if (!tree) return [];
  const out: Array<{ start: number; end: number; kind: NodeKind }> = [];
  for (let node = 0; node < tree.size; node++) {
    const kind = tree.kinds[node];
    if (kind !== NodeKind.Number && kind !== NodeKind.String) continue;
    const parent = tree.parents[node];
    if (parent !== NONE && tree.kinds[parent] === NodeKind.Property && tree.firstChildren[parent] === node) continue;
    out.push({ start: tree.starts[node], end: tree.ends[node], kind });
  }
  return out;
}

const NUMBER_TEXTS = [
  '0',
  '1',
  '-2',
  '0.5',
  '0.25',
  '1e-3',
  '12.5e1',
  '-0',
  '1e400',
  '01',
  '1.',
  '-',
  '2 ',
  '3,4',
  '"3"',
];
const STRING_TEXTS = ['"x"', '"goal"', '"failure"', '"a\\"b"', '"\\u0041"', '""', '"open', '"a" ', '7', 'null', '"s"'];

/** One edit of `text`: a value replaced (valid or not), or a character inserted or deleted anywhere. */
function editArbitrary(text: string) {
  const values = valueRanges(text);
  const replace = fc
    .tuple(fc.nat(Math.max(0, values.length - 1)), fc.nat(NUMBER_TEXTS.length - 1), fc.nat(STRING_TEXTS.length - 1))
    .map(([v, n, s]) => {
      const value = values[v];
      if (!value) return text;
      const written = value.kind === NodeKind.Number ? NUMBER_TEXTS[n] : STRING_TEXTS[s];
      return text.slice(0, value.start) + written + text.slice(value.end);
    });
  const insert = fc
    .tuple(fc.nat(text.length), fc.constantFrom(' ', ',', '1', '"', '}', 'e', '-'))
    .map(([at, ch]) => text.slice(0, at) + ch + text.slice(at));
  const remove = fc.nat(Math.max(0, text.length - 1)).map((at) => text.slice(0, at) + text.slice(at + 1));
  return fc.oneof(
    { arbitrary: replace, weight: 4 },
    { arbitrary: insert, weight: 1 },
    { arbitrary: remove, weight: 1 },
  );
}

describe('re-reading a JSON spec after an edit', () => {
  it('gives the fresh read for chains of random edits of every example and a grid', () => {
    let patched = 0;
    let edits = 0;
    for (const { text } of [...EXAMPLES, { name: 'grid', text: GRID }]) {
      fc.assert(
        fc.property(fc.integer({ min: 1, max: 1_000_000 }), (seed) => {
          const memory = new JsonReadMemory();
          let current = text;
          expectSameRead(memory, current);
          // A chain of edits, each from the text the last one left (and the memory it left).
          fc.sample(fc.constant(null), { numRuns: 6, seed }).forEach((_, step) => {
            current = fc.sample(editArbitrary(current), { numRuns: 1, seed: seed + step })[0];
            edits++;
            if (expectSameRead(memory, current)) patched++;
          });
        }),
        { numRuns: 8, seed: 20261203 },
      );
    }
    // Two in three edits replace a value, about half of them with a valid one of the same kind;
    // a chain reads afresh from its first edit that leaves a finding. About one in five patches.
    expect(patched).toBeGreaterThan(edits / 8);
  });

  it('patches an edit inside a number, longer or shorter, of the 100x100 grid', () => {
    const text = JSON.stringify(slipperyGridSpec({ size: 100, discount: 0.99 }));
    const memory = new JsonReadMemory();
    parseJsonSpec(text, memory);
    const at = text.indexOf('"reward":-1}', text.indexOf('"from":"r50c50"'));
    let current = text;
    for (const written of ['-2', '-10', '-0.5', '-1']) {
      const offset = current.indexOf('"reward":', at) + '"reward":'.length;
      const end = current.indexOf('}', offset);
      const next = current.slice(0, offset) + written + current.slice(end);
      const before = memory.rereads;
      const again = parseJsonSpec(next, memory);
      expect(memory.rereads).toBe(before + 1);
      expect(again.findings).toEqual([]);
      const rewards = again.spec.transitions.flatMap((t) => t.outcomes.flatMap((o) => o.reward));
      const edited = rewards.find((part) => part.span.start === offset);
      expect(edited?.value).toBe(Number(written));
      expect(next.slice(edited!.span.start, edited!.span.end)).toBe(written);
      // Everything after the edit moved with the text.
      const last = again.spec.transitions[again.spec.transitions.length - 1];
      expect(next.slice(last.fromSpan.start, last.fromSpan.end)).toBe(JSON.stringify(last.from));
      current = next;
    }
  });

  it('reads afresh where the schema judges more than the value: a repeated action, a bad terminal kind, a renamed key', () => {
    const example = EXAMPLES.find((e) => e.name === 'warehouse-picking.mdp.json')!;
    const spec = parseJsonSpec(example.text).spec;
    expect(spec.actions.length).toBeGreaterThan(1);
    const [first, second] = spec.actions;
    const terminal = spec.states.find((s) => s.terminalSpan)!;
    const cases = [
      // uniqueItems: the second action renamed to the first.
      example.text.slice(0, second.span.start) + JSON.stringify(first.value) + example.text.slice(second.span.end),
      // enum: a terminal kind that is not one.
      example.text.slice(0, terminal.terminalSpan!.start) + '"goall"' + example.text.slice(terminal.terminalSpan!.end),
      // A key: the structure changes.
      example.text.slice(0, terminal.span.start) + '"renamed-state"' + example.text.slice(terminal.span.end),
    ];
    for (const text of cases) {
      const memory = new JsonReadMemory();
      parseJsonSpec(example.text, memory);
      expect(expectSameRead(memory, text)).toBe(false);
    }
    // The repeated action and the bad kind are schema findings of the fresh read, so nothing was lost.
    expect(parseJsonSpec(cases[0]).findings.length).toBeGreaterThan(0);
    expect(parseJsonSpec(cases[1]).findings.length).toBeGreaterThan(0);
  });
});
