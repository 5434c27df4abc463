/**
 * A spec that does not compile still gets the checks that need only its graph, read from its
 * declared part with the broken edges left out; values stay off until it compiles. Scenarios of
 * our own (a delivery cart), invented numbers.
 */
import { describe, expect, it } from 'vitest';
import { checkSpec, findingsOf, spanText, type SpecObject } from '../helpers/specs';

function cart(extraStates: object = {}, extraTransitions: object[] = []): SpecObject {
  return {
    name: 'cart',
    discount: 0.9,
    start: 'yard',
    actions: ['drive'],
    states: { yard: {}, ramp: {}, dock: { terminal: 'goal' }, ...extraStates },
    transitions: [
      { from: 'yard', action: 'drive', to: 'ramp', reward: -1 },
      // 'dokc' is a typo of 'dock': the only route to the goal is broken.
      { from: 'ramp', action: 'drive', to: 'dokc', reward: 10 },
      ...extraTransitions,
    ],
  };
}

describe('graph rules on a spec that does not compile', () => {
  it('adding an unreachable goal is reported, with the declared part named, and no values', () => {
    const before = checkSpec(cart());
    const after = checkSpec(cart({ shelf: { terminal: 'goal' } }));
    expect(before.notAnalysed).toContain("'dokc', which is not a declared state");
    expect(after.analysis).toBeUndefined();
    const found = findingsOf(after, 'unreachable-terminal').filter((f) => spanText(after, f) === '"shelf"');
    expect(found).toHaveLength(1);
    expect(found[0].message).toContain('read from its declared part with the broken transitions left out');
    expect(found[0].message).toContain("'dokc'");
    // The broken edge is left out, so the goal behind it is unreachable as well: both fronts say so.
    expect(findingsOf(before, 'unreachable-terminal').map((f) => spanText(before, f))).toEqual(['"dock"']);
    expect(findingsOf(before, 'undeclared-state')).toHaveLength(1);
  });

  it('reports an unreachable state and a real trap of the declared part, but never a trap at a broken state', () => {
    const report = checkSpec(
      cart({ pit: {}, attic: {} }, [
        { from: 'yard', action: 'drive', to: { ramp: 0.5, pit: 0.5 }, reward: -1 },
        { from: 'pit', action: 'drive', to: 'pit', reward: -1 },
        { from: 'attic', action: 'drive', to: 'yard', reward: 0 },
      ]),
    );
    // yard --drive--> is written twice: the first (to ramp) is used, so pit is reached only by the duplicate.
    expect(findingsOf(report, 'duplicate-transition')).toHaveLength(1);
    expect(
      findingsOf(report, 'unreachable-state')
        .map((f) => spanText(report, f))
        .sort(),
    ).toEqual(['"attic"', '"pit"']);
    // 'ramp' lost its only transition, so whether it leads out is unknown: no trap there.
    expect(findingsOf(report, 'trap-state')).toEqual([]);
  });

  it('a trap behind well-formed edges is reported, as a warning even at discount 1', () => {
    const report = checkSpec({
      ...cart({ pit: {} }, [{ from: 'pit', action: 'drive', to: 'pit', reward: -1 }]),
      discount: 1,
      transitions: [
        { from: 'yard', action: 'drive', to: { pit: 0.5, ramp: 0.5 }, reward: -1 },
        { from: 'ramp', action: 'drive', to: 'dokc', reward: 10 },
        { from: 'pit', action: 'drive', to: 'pit', reward: -1 },
      ],
    });
    const [trap] = findingsOf(report, 'trap-state');
    expect(spanText(report, trap)).toBe('"pit"');
    expect(trap.severity).toBe('warning');
    expect(trap.message).toContain('declared part');
    expect(trap.message).not.toContain('V*');
  });

  it('a spec that compiles gets no declared-part note', () => {
    const report = checkSpec({
      ...cart({ shelf: { terminal: 'goal' } }),
      transitions: [
        { from: 'yard', action: 'drive', to: 'ramp' },
        { from: 'ramp', action: 'drive', to: 'dock' },
      ],
    });
    expect(report.analysis).toBeDefined();
    const [found] = findingsOf(report, 'unreachable-terminal');
    expect(spanText(report, found)).toBe('"shelf"');
    expect(found.message).not.toContain('declared part');
  });
});
