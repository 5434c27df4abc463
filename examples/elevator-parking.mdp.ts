/**
 * A service elevator carries a cart from the basement to the fourth floor. A scenario of our own:
 * every number is invented for the example.
 *
 * A sampled model with discount 1 and no horizon. Planted bug: "park" puts the elevator into
 * maintenance mode, from which no action ever leaves, and nothing ends the episode there: random
 * rollouts run into the step cap (episode-never-ends) and the model built from the samples shows
 * the region no policy can leave (trap-state).
 */
import { defineMdp, type Rng } from 'episcope';

interface Elevator {
  floor: number;
  parked: boolean;
}

export default defineMdp({
  name: 'elevator-parking',
  discount: 1,
  start: { floor: 0, parked: false },
  actions: (elevator: Elevator) => (elevator.parked ? ['wait'] : ['up', 'park']),
  sample(elevator: Elevator, action: string, rng: Rng) {
    if (elevator.parked || action === 'park') return { state: { floor: elevator.floor, parked: true }, reward: 0 };
    // The doors sometimes jam and the elevator stays a step longer.
    const floor = rng() < 0.8 ? elevator.floor + 1 : elevator.floor;
    if (floor >= 4) return { state: { floor: 4, parked: false }, reward: 10, terminal: 'goal' as const };
    return { state: { floor, parked: false }, reward: -1 };
  },
});
