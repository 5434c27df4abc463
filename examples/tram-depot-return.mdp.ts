/**
 * A tram drives its last run back to the depot through three stops; at each stop it may wait for
 * a green light or go, and going on red risks an emergency stop. A scenario of our own: every
 * number is invented for the example.
 *
 * A clean sampled model: a black box with discrete states, so Episcope builds the model of its
 * samples (every stop tried with both actions) and the rules find nothing to report.
 */
import { defineMdp, type Rng } from 'episcope';

export default defineMdp({
  name: 'tram-depot-return',
  discount: 0.97,
  rewardTerms: {
    time: { direction: 'penalty' },
    arrival: { direction: 'bonus' },
    incident: { direction: 'penalty' },
  },
  start: { stop: 0 },
  actions: () => ['wait', 'go'],
  sample(tram: { stop: number }, action: string, rng: Rng) {
    if (action === 'go' && rng() < 0.2) return { state: { stop: tram.stop }, reward: { time: -1, incident: -20 }, terminal: 'failure' as const };
    const stop = action === 'wait' && rng() < 0.5 ? tram.stop : tram.stop + 1;
    if (stop >= 3) return { state: { stop }, reward: { time: -1, arrival: 10 }, terminal: 'goal' as const };
    return { state: { stop }, reward: { time: -1 } };
  },
});
