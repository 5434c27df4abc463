/**
 * A stealth game: the player crosses a courtyard to the vault; distracting a guard is meant as a
 * small help. A scenario of our own: every number (rewards, odds) is invented for the example.
 *
 * A sampled model (a black box: `sample` only). Planted bug: the +2 distraction bonus is paid every
 * time, and the guard can be distracted again after stepping back into the shadows, so circling
 * shadows -> guard post -> shadows earns more than reaching the vault (reward-loop, found on the
 * model Episcope builds from the samples).
 */
import { defineMdp, type Rng } from 'episcope';

type Place = 'shadows' | 'guard-post' | 'courtyard' | 'vault' | 'caught';

export default defineMdp({
  name: 'stealth-guard-bonus',
  discount: 0.95,
  start: 'shadows' as Place,
  actions: (place: Place) => (place === 'shadows' ? ['sneak', 'distract'] : place === 'guard-post' ? ['retreat'] : ['dash']),
  sample(place: Place, action: string, rng: Rng) {
    if (place === 'shadows' && action === 'distract') return { state: 'guard-post' as Place, reward: 2 };
    if (place === 'guard-post') return { state: 'shadows' as Place, reward: 0 };
    if (place === 'shadows') return { state: 'courtyard' as Place, reward: -1 };
    // Dashing across the courtyard: usually into the vault, sometimes into the guard's arms.
    return rng() < 0.85 ? { state: 'vault' as Place, reward: 10, terminal: 'goal' as const } : { state: 'caught' as Place, reward: -5, terminal: 'failure' as const };
  },
});
