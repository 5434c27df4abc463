/**
 * An arcade game bot runs a level from the gate to the exit; coins are picked up on the way. A
 * scenario of our own: every number is invented for the example.
 *
 * A sampled model with discount 1 and no horizon. Planted bug: the coin room respawns its coin,
 * so walking hall -> coin room -> hall earns +1 per lap without end: the best return is unbounded
 * (unbounded-return).
 */
import { defineMdp, type Rng } from 'episcope';

type Room = 'gate' | 'hall' | 'coin-room' | 'exit' | 'pit';

export default defineMdp({
  name: 'arcade-coin-loop',
  discount: 1,
  start: 'gate' as Room,
  actions: (room: Room) => (room === 'hall' ? ['to-coins', 'to-exit'] : room === 'coin-room' ? ['back'] : ['run']),
  sample(room: Room, action: string, rng: Rng) {
    if (room === 'gate') return { state: 'hall' as Room, reward: 0 };
    if (room === 'coin-room') return { state: 'hall' as Room, reward: 0 };
    if (action === 'to-coins') return { state: 'coin-room' as Room, reward: 1 };
    return rng() < 0.9 ? { state: 'exit' as Room, reward: 5, terminal: 'goal' as const } : { state: 'pit' as Room, reward: -5, terminal: 'failure' as const };
  },
});
