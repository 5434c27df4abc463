/**
 * A pump controller fills a tank in steps; running the pump hard warms it up, and an overheated pump
 * is meant to end the episode as a failure. A scenario of our own: every number is invented.
 *
 * A sampled model. Planted bug: the heat is capped at 90 but the failure needs more than 100, so the
 * "failure" the code names is never entered by any sampled episode (unreachable-terminal): the
 * hazard it stands for has no effect on the agent.
 */
import { defineMdp } from 'episcope';

interface Pump {
  level: number;
  heat: number;
}

export default defineMdp({
  name: 'pump-overheat-never',
  discount: 0.95,
  start: { level: 0, heat: 0 },
  actions: () => ['gentle', 'hard'],
  sample(pump: Pump, action: string) {
    const hard = action === 'hard';
    const level = pump.level + (hard ? 2 : 1);
    const heat = Math.min(90, hard ? pump.heat + 30 : Math.max(0, pump.heat - 10));
    if (heat > 100) return { state: { level, heat }, reward: -10, terminal: 'failure' as const };
    if (level >= 6) return { state: { level: 6, heat: 0 }, reward: 5, terminal: 'goal' as const };
    return { state: { level, heat }, reward: -1 };
  },
});
