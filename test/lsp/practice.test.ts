/**
 * The worker's practice on a small document (server/src/lsp/practice.ts): its edit must be one
 * that the language server re-reads by patching (the path it is there to compile), it must change
 * exactly the reward it names, and the practice must stop when a job comes.
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { JsonReadMemory, parseJsonSpec } from '../../server/src/load/json';
import { PRACTICE_ROUNDS, practiceEdit, practise } from '../../server/src/lsp/practice';
import { warehouseSpecText } from './warehouse-spec';

const ROOT = join(__dirname, '..', '..');

describe('practiceEdit', () => {
  it.each([
    ['the 1k-state warehouse spec', warehouseSpecText(1_000)],
    ...['drone-delivery', 'maze-runner-shaping', 'warehouse-picking'].map((name) => [
      `examples/${name}.mdp.json`,
      readFileSync(join(ROOT, 'examples', `${name}.mdp.json`), 'utf8'),
    ]),
  ])('changes one reward of %s by 1, read as an edit inside one value', (_name, text) => {
    const memory = new JsonReadMemory();
    const original = parseJsonSpec(text, memory);
    const edited = practiceEdit(text, original.spec);
    expect(edited).toBeDefined();
    const again = parseJsonSpec(edited!, memory);
    expect(memory.rereads).toBe(1);
    // Exactly one written reward differs, by +1 (a transition's reward is shared by its outcomes).
    const parts = (spec: typeof original.spec) =>
      spec.transitions.flatMap((t) =>
        t.outcomes.flatMap((o) => o.reward.map((r) => ({ at: r.span.start, value: r.value }))),
      );
    const before = parts(original.spec);
    const after = parts(again.spec);
    expect(after).toHaveLength(before.length);
    const changed = before.filter((part, i) => after[i].value !== part.value);
    expect(changed.length).toBeGreaterThan(0);
    expect(new Set(changed.map((part) => part.at)).size).toBe(1);
    for (const part of changed) expect(after[before.indexOf(part)].value).toBe(part.value + 1);
    expect(again.findings).toEqual(parseJsonSpec(edited!).findings);
  });

  it('gives nothing for a spec without a written reward', () => {
    const text = JSON.stringify({
      discount: 0.9,
      states: { a: {}, end: { terminal: 'goal' } },
      start: 'a',
      transitions: [{ from: 'a', action: 'go', to: 'end' }],
    });
    expect(practiceEdit(text, parseJsonSpec(text).spec)).toBeUndefined();
  });
});

describe('practise', () => {
  it('analyses the edited and the original text in turn, the given number of rounds', async () => {
    const seen: string[] = [];
    const rounds = await practise(
      { original: 'o', edited: 'e' },
      async (text) => void seen.push(text),
      () => false,
    );
    expect(rounds).toBe(PRACTICE_ROUNDS);
    expect(seen).toEqual(Array.from({ length: PRACTICE_ROUNDS }, (_, i) => (i % 2 === 0 ? 'e' : 'o')));
  });

  it('runs nothing when a job comes during the pause before it', async () => {
    let waiting = false;
    setTimeout(() => (waiting = true), 10);
    const seen: string[] = [];
    const rounds = await practise(
      { original: 'o', edited: 'e' },
      async (text) => void seen.push(text),
      () => waiting,
      PRACTICE_ROUNDS,
      100,
    );
    expect(rounds).toBe(0);
    expect(seen).toEqual([]);
  });

  it('stops as soon as a job is waiting', async () => {
    let waiting = false;
    const seen: string[] = [];
    const rounds = await practise(
      { original: 'o', edited: 'e' },
      async (text) => {
        seen.push(text);
        if (seen.length === 2) waiting = true;
      },
      () => waiting,
    );
    expect(rounds).toBe(2);
    expect(seen).toEqual(['e', 'o']);
  });
});
