/**
 * A lunar rover drives along a four-waypoint track to a charging station, with a "progress"
 * shaping term to speed up training. A scenario of our own: every number is invented.
 *
 * A sampled model. Planted bug: progress pays +1 for each waypoint forward but takes nothing back
 * for driving back, so it is not potential-based: the cycle forward-and-back nets +1 of shaping
 * (shaping-not-potential), which the model built from the samples shows.
 */
import { defineMdp, type Rng } from 'episcope';

export default defineMdp({
  name: 'rover-progress-shaping',
  discount: 0.9,
  rewardTerms: {
    energy: { direction: 'penalty' },
    arrival: { direction: 'bonus' },
    progress: { direction: 'either', shaping: true },
  },
  start: { waypoint: 0 },
  actions: (rover: { waypoint: number }) => (rover.waypoint === 0 ? ['forward'] : ['forward', 'back']),
  sample(rover: { waypoint: number }, action: string, rng: Rng) {
    // Loose regolith sometimes stops the rover for a step.
    if (rng() < 0.1) return { state: rover, reward: { energy: -1 } };
    if (action === 'back') return { state: { waypoint: rover.waypoint - 1 }, reward: { energy: -1, progress: 0 } };
    const waypoint = rover.waypoint + 1;
    if (waypoint >= 4) return { state: { waypoint }, reward: { energy: -1, arrival: 10, progress: 1 }, terminal: 'goal' as const };
    return { state: { waypoint }, reward: { energy: -1, progress: 1 } };
  },
});
