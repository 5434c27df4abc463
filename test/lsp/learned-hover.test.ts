/**
 * Hover on a sampled model's state literals: the learned Q and visit count of each action, checked
 * against the learning block of `episcope check --format json` on the same file and seed; a state
 * the learner never met, and a literal that names no state, show no learned line.
 */
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, test } from 'vitest';
import { analyzeFile } from '../../server/src/analyze';
import { resolveConfig } from '../../server/src/config';
import { formatNumber } from '../../server/src/lsp/format';
import { hoverAt } from '../../server/src/lsp/hover';
import { buildSnapshot } from '../../server/src/lsp/snapshot';
import { cli } from '../cli/cli-harness';
import { writeFolder } from '../typescript/ts-specs';

/**
 * A picking robot of our own (invented numbers): from the dock it drives to the aisle; in the aisle
 * "reach" gets to the shelf four times in five, "wait" stays; picking at the shelf ends the episode
 * with 10. The loft has its own action but no sample ever leads there.
 */
const PICKER = `import { defineMdp } from 'episcope';

export default defineMdp({
  name: 'picker',
  discount: 0.9,
  start: () => 'dock',
  actions: (state: string) => (state === 'loft' ? ['climb'] : state === 'shelf' ? ['pick'] : ['drive', 'wait', 'reach']),
  sample(state: string, action: string, rng: () => number) {
    if (state === 'shelf') return { state: 'done', reward: 10, terminal: 'goal' as const };
    if (action === 'wait') return { state, reward: -0.5 };
    if (state === 'dock') return { state: action === 'drive' ? 'aisle' : 'dock', reward: -1 };
    if (action === 'reach') return { state: rng() < 0.8 ? 'shelf' : 'aisle', reward: -1 };
    return { state: 'dock', reward: -1 };
  },
});
`;

const SETTINGS = { rollouts: 200, seed: 5, learning: { steps: 5000 } };

interface JsonLearningState {
  key: string;
  visits: number;
  actions: Array<{ action: string; q: number | null; visits: number }>;
}

describe('hover on the literals of a sampled model', () => {
  test(
    'a state the learner met: each action with the learned Q and visits of the JSON output, said to be an estimate',
    { timeout: 120_000 },
    async () => {
      const folder = writeFolder({});
      const path = join(folder, 'picker.mdp.ts');
      writeFileSync(path, PICKER);
      writeFileSync(join(folder, 'episcope.config.json'), JSON.stringify(SETTINGS));
      const report = await analyzeFile(path, PICKER, { config: resolveConfig(SETTINGS) });
      expect(report.internalErrors).toEqual([]);
      const snapshot = buildSnapshot({ uri: 'file:///work/picker.mdp.ts', version: 1, report, durationMs: 1 });
      expect(snapshot.learned).toBeDefined();

      const checked = await cli(['check', path, '--format', 'json', '--fail-on', 'never']);
      expect(checked.code).toBe(0);
      const states = (
        JSON.parse(checked.stdout) as { files: Array<{ rollouts: { learning: { states: JsonLearningState[] } } }> }
      ).files[0].rollouts.learning.states;
      for (const name of ['dock', 'aisle', 'shelf']) {
        const expected = states.find((s) => s.key === JSON.stringify(name))!;
        expect(expected, name).toBeDefined();
        // Every literal 'dock' in the source answers, the one in start() and those in the functions.
        const offsets = [...PICKER.matchAll(new RegExp(`'${name}'`, 'g'))].map((m) => m.index! + 1);
        expect(offsets.length).toBeGreaterThan(0);
        for (const offset of offsets) {
          const answer = hoverAt(snapshot, offset)!;
          expect(answer, `${name} at ${offset}`).toBeDefined();
          expect(PICKER.slice(answer.start, answer.end)).toBe(`'${name}'`);
          expect(answer.markdown).toContain('learned by Q-learning from samples: estimates, not bounds');
          expect(answer.markdown).toContain(`Visited ${expected.visits.toLocaleString('en-US')} time`);
          for (const action of expected.actions) {
            const q = action.q === null ? 'not tried' : formatNumber(action.q);
            expect(answer.markdown).toContain(`| \`${action.action}\` | ${q} | ${action.visits} |`);
          }
          expect(answer.markdown).not.toMatch(/NaN|undefined/);
        }
      }
      // The shelf's only action is tried on every visit: its Q is the reward 10 of the one step that ends there.
      const shelf = hoverAt(snapshot, PICKER.indexOf("'shelf'") + 1)!;
      expect(shelf.markdown).toMatch(/\| `pick` \| 10 \| [1-9]\d* \|/);
    },
  );

  test('a state never met and a literal that names no state show no learned line', { timeout: 120_000 }, async () => {
    const folder = writeFolder({ 'picker.mdp.ts': PICKER });
    const report = await analyzeFile(join(folder, 'picker.mdp.ts'), PICKER, { config: resolveConfig(SETTINGS) });
    const snapshot = buildSnapshot({ uri: 'file:///work/picker.mdp.ts', version: 1, report, durationMs: 1 });
    expect(report.rollouts?.learning?.states.some((s) => s.key === '"loft"')).toBe(false);
    expect(hoverAt(snapshot, PICKER.indexOf("'loft'") + 1)).toBeUndefined();
    expect(hoverAt(snapshot, PICKER.indexOf("'climb'") + 1)).toBeUndefined();
    expect(hoverAt(snapshot, PICKER.indexOf("'picker'") + 1)).toBeUndefined();
    // With learning off there is nothing learned to show anywhere.
    const off = await analyzeFile(join(folder, 'picker.mdp.ts'), PICKER, {
      config: resolveConfig({ ...SETTINGS, learning: { method: 'off' } }),
    });
    const quiet = buildSnapshot({ uri: 'file:///work/picker.mdp.ts', version: 1, report: off, durationMs: 1 });
    expect(quiet.learned).toBeUndefined();
    expect(hoverAt(quiet, PICKER.indexOf("'dock'") + 1)).toBeUndefined();
  });

  test(
    "with a horizon, a row per time step the learner acted in, with the JSON output's figures",
    { timeout: 120_000 },
    async () => {
      const timed = PICKER.replace('discount: 0.9,', 'discount: 0.9,\n  horizon: 4,');
      const folder = writeFolder({ 'picker.mdp.ts': timed });
      const path = join(folder, 'picker.mdp.ts');
      const report = await analyzeFile(path, timed, { config: resolveConfig(SETTINGS) });
      const snapshot = buildSnapshot({ uri: 'file:///work/picker.mdp.ts', version: 1, report, durationMs: 1 });
      const states = report.rollouts!.learning!.states.filter(
        (s) => s.key === '"aisle"' && s.actions.some((a) => a.visits > 0),
      );
      expect(states.length).toBeGreaterThan(1);
      const answer = hoverAt(snapshot, timed.indexOf("'aisle'") + 1)!;
      expect(answer.markdown).toContain('| steps taken | action | learned Q | visits |');
      for (const state of states) {
        for (const action of state.actions) {
          const q = action.visits > 0 ? formatNumber(action.q) : 'not tried';
          expect(answer.markdown).toContain(`| ${state.step} | \`${action.action}\` | ${q} | ${action.visits} |`);
        }
      }
    },
  );
});
