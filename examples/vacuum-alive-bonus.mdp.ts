/**
 * A vacuum robot cleans three rooms and then docks to end its job. A scenario of our own: every
 * number is invented for the example.
 *
 * A sampled model. Planted bug: a +1 "still running" bonus per step, meant to keep it from
 * stalling, is worth 1/(1 - 0.99) = 100 over an endless shift, far more than the +20 for finishing:
 * the robot is paid to never dock (living-reward).
 */
import { defineMdp, type Rng } from 'episcope';

export default defineMdp({
  name: 'vacuum-alive-bonus',
  discount: 0.99,
  start: { rooms: 0 },
  actions: (robot: { rooms: number }) => (robot.rooms >= 3 ? ['dock', 'patrol'] : ['clean', 'patrol']),
  sample(robot: { rooms: number }, action: string, rng: Rng) {
    if (action === 'dock') return { state: { rooms: 3 }, reward: 20, terminal: 'goal' as const };
    if (action === 'patrol') return { state: robot, reward: 1 };
    // A room is done in one pass most of the time.
    return { state: { rooms: rng() < 0.8 ? robot.rooms + 1 : robot.rooms }, reward: 1 };
  },
});
