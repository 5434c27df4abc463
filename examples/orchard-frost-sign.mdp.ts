/**
 * A frost-protection controller runs heaters in an orchard through a cold night; costs, so the
 * objective is "minimize". A scenario of our own: every number is invented for the example.
 *
 * A sampled model. Planted bug: one sign slip, the crop-loss cost written as -30 instead of +30.
 * Under "minimize" a penalty is a positive cost, so the slip contradicts the term's declared
 * direction (term-direction) and makes losing the crop cheaper than saving it (objective-sign).
 */
import { defineMdp, type Rng } from 'episcope';

export default defineMdp({
  name: 'orchard-frost-sign',
  objective: 'minimize',
  discount: 1,
  rewardTerms: {
    fuel: { direction: 'penalty' },
    loss: { direction: 'penalty' },
  },
  start: { hour: 0 },
  actions: () => ['heat', 'idle'],
  sample(night: { hour: number }, action: string, rng: Rng) {
    const hour = night.hour + 1;
    if (action === 'idle' && rng() < 0.3) return { state: { hour }, reward: { loss: -30 }, terminal: 'failure' as const };
    const fuel = action === 'heat' ? 2 : 0;
    if (hour >= 4) return { state: { hour }, reward: { fuel }, terminal: 'goal' as const };
    return { state: { hour }, reward: { fuel } };
  },
});
