/**
 * Splitting a sampled model's rollouts and measured episodes across sandbox children (--jobs N)
 * and joining the parts. Every episode is seeded by its index alone, so a range of episodes gives
 * the same records in any child; joining the ranges in episode order gives the figures one child
 * would have given.
 */
import { joinRecords } from './learn';
import type { RolloutRun, RuntimeProblem } from './runtime';

/** Consecutive ranges of `total` episodes, at most `parts` of them, none empty, sizes differing by at most one. */
export function splitEpisodes(total: number, parts: number): Array<{ first: number; count: number }> {
  const used = Math.max(1, Math.min(parts, total));
  const ranges: Array<{ first: number; count: number }> = [];
  let first = 0;
  for (let k = 0; k < used; k++) {
    const count = Math.floor(total / used) + (k < total % used ? 1 : 0);
    ranges.push({ first, count });
    first += count;
  }
  return ranges;
}

/**
 * The rollout runs of consecutive ranges as one run. A problem ends the joined run where it
 * happened, as it ends a single run: later ranges are dropped. Fingerprints are those of the first
 * `fingerprints` episodes.
 */
export function joinRolloutRuns(runs: readonly RolloutRun[], fingerprints: number): RolloutRun {
  const kept: RolloutRun[] = [];
  let problem: RuntimeProblem | undefined;
  for (const run of runs) {
    kept.push(run);
    if (run.problem) {
      problem = run.problem;
      break;
    }
  }
  let nonFiniteEpisodes = 0;
  let completed = 0;
  for (const run of kept) {
    nonFiniteEpisodes += run.nonFiniteEpisodes;
    completed += run.completed;
  }
  return {
    records: joinRecords(kept.map((run) => run.records)),
    nonFiniteEpisodes,
    firstNonFinite: kept.find((run) => run.firstNonFinite)?.firstNonFinite,
    problem,
    fingerprints: kept.flatMap((run) => run.fingerprints).slice(0, fingerprints),
    completed,
  };
}
