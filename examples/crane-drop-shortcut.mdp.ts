/**
 * A harbour crane carries a container along a five-section rail to the quay; releasing it early
 * drops it on the pier. A scenario of our own: every number is invented for the example.
 *
 * A sampled model. Planted bug: each rail section costs 2 while a dropped container costs only 4,
 * so from the first sections dropping it beats carrying it on (failure-preferred).
 */
import { defineMdp, type Rng } from 'episcope';

export default defineMdp({
  name: 'crane-drop-shortcut',
  discount: 1,
  start: { section: 0 },
  actions: () => ['carry', 'release'],
  sample(crane: { section: number }, action: string, rng: Rng) {
    if (action === 'release') return { state: { section: -1 }, reward: -4, terminal: 'failure' as const };
    // Wind sometimes holds the crane in place for a step.
    const section = rng() < 0.9 ? crane.section + 1 : crane.section;
    if (section >= 5) return { state: { section: 5 }, reward: -2, terminal: 'goal' as const };
    return { state: { section }, reward: -2 };
  },
});
