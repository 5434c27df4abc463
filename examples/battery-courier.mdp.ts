/**
 * A courier robot crosses a campus to a drop-off point on a battery whose drain is noisy. A scenario
 * of our own: distances, drain rates and rewards are invented for the example.
 *
 * A sampled model: `sample` draws the next state from the `rng` it is given (never Math.random),
 * as a simulator would. Episcope cannot list the outcomes, so it runs seeded rollouts under the
 * uniformly random policy and reports estimates with 95% confidence intervals.
 */
import { defineMdp, type Rng } from 'episcope';

interface Courier {
  /** Metres still to go. */
  distance: number;
  /** Battery charge in percent. */
  battery: number;
}

const ROUTE_LENGTH = 400;

export default defineMdp({
  name: 'battery-courier',
  discount: 0.99,
  horizon: 200,
  rewardTerms: {
    delivery: { direction: 'bonus' },
    time: { direction: 'penalty' },
    breakdown: { direction: 'penalty' },
  },
  start: (rng: Rng): Courier => ({ distance: ROUTE_LENGTH, battery: 20 + rng.int(21) }),
  actions: (courier: Courier) => (courier.battery < 15 ? ['cruise', 'recharge'] : ['cruise', 'sprint', 'recharge']),
  sample(courier: Courier, action: string, rng: Rng) {
    let { distance, battery } = courier;
    if (action === 'recharge') battery = Math.min(100, battery + 3 + rng.int(4));
    else {
      const sprint = action === 'sprint';
      distance -= sprint ? 30 + rng.int(11) : 15 + rng.int(6);
      battery -= Math.max(0, rng.normal(sprint ? 5 : 2, sprint ? 1.5 : 0.5));
    }
    if (distance <= 0) return { state: { distance: 0, battery }, reward: { delivery: 20, time: -1 }, terminal: 'goal' as const };
    if (battery <= 0) return { state: { distance, battery: 0 }, reward: { breakdown: -15, time: -1 }, terminal: 'failure' as const };
    return { state: { distance, battery }, reward: { time: -1 } };
  },
});
