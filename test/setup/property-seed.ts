/**
 * Seeds every fast-check property of the suite once, so that a run is reproducible: the same seed
 * on every machine, printed with the failure. To explore beyond the fixed seed, set
 * EPISCOPE_PROPERTY_SEED to `random` (a fresh seed per run, printed at start and on failure) or to
 * an integer (replays that run).
 */
import fc from 'fast-check';
import { beforeEach } from 'vitest';

/** The suite's seed when EPISCOPE_PROPERTY_SEED is not set (any fixed integer does). */
const FIXED_SEED = 20_261_202;

export function propertySeed(setting: string | undefined): number {
  if (setting === undefined || setting === '') return FIXED_SEED;
  if (setting === 'random') return (Math.random() * 0x1_0000_0000) | 0;
  const seed = Number(setting);
  if (!Number.isInteger(seed))
    throw new Error(`EPISCOPE_PROPERTY_SEED must be an integer or "random", not ${JSON.stringify(setting)}`);
  return seed;
}

const seed = propertySeed(process.env.EPISCOPE_PROPERTY_SEED);
fc.configureGlobal({ seed });
if (process.env.EPISCOPE_PROPERTY_SEED === 'random')
  console.log(`fast-check seed of this run: ${seed} (replay with EPISCOPE_PROPERTY_SEED=${seed})`);

beforeEach((context) => {
  context.onTestFailed(() => {
    console.error(
      `fast-check seed of this run: ${seed}; if this test checks a property, replay it with EPISCOPE_PROPERTY_SEED=${seed}`,
    );
  });
});
