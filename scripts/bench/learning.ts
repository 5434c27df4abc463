/**
 * Learning from samples (sandbox/learn.ts): 200k Q-learning steps on a trivial sampled model of
 * our own (a ring of 50 cells, two moves, a coin flip for slipping), in one process and through the
 * sandbox worker. Goal: 200k steps within 2 s on 2 cores. Then the whole check of the same model
 * as a spec file (rollouts, transition counts, learning) with one and with two sandbox children
 * (--jobs), whose figures are the same: only the wall time may differ.
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { analyzeFile } from '../../server/src/analyze';
import { resolveConfig } from '../../server/src/config';
import { ModelSandbox } from '../../server/src/sandbox/host';
import { DEFAULT_LEARNING, learnModel } from '../../server/src/sandbox/learn';
import type { ModelRng } from '../../server/src/sandbox/runtime';

const STEPS = 200_000;

const ring = {
  start: 0,
  actions: () => ['left', 'right'],
  sample: (cell: unknown, action: unknown, rng: ModelRng) => {
    const move = rng.chance(0.2) ? 0 : action === 'right' ? 1 : -1;
    const next = ((cell as number) + move + 50) % 50;
    return { state: next, reward: next === 49 ? 1 : 0, terminal: next === 49 ? ('goal' as const) : undefined };
  },
};

const RING_SPEC = `import { defineMdp } from 'episcope';
export default defineMdp({
  name: 'ring-bench',
  discount: 0.99,
  start: 0,
  actions: () => ['left', 'right'],
  sample(cell: number, action: string, rng: { chance(p: number): boolean }) {
    const move = rng.chance(0.2) ? 0 : action === 'right' ? 1 : -1;
    const next = (cell + move + 50) % 50;
    return { state: next, reward: next === 49 ? 1 : 0, terminal: next === 49 ? ('goal' as const) : undefined };
  },
});
`;

const options = {
  settings: { ...DEFAULT_LEARNING, steps: STEPS, episodes: 1_000_000, evaluationEpisodes: 100, decisionEpisodes: 0 },
  seed: 1,
  discount: 0.99,
  stepCap: 10_000,
  maximize: true,
  declaredTerms: [],
};

export async function run(): Promise<void> {
  let began = performance.now();
  const direct = learnModel(ring, options);
  let seconds = (performance.now() - began) / 1000;
  console.log(
    `learning in process: ${direct.summary.spent.steps} steps in ${seconds.toFixed(2)} s (${Math.round(direct.summary.spent.steps / seconds)} steps/s; goal: 200k steps <= 2 s)`,
  );

  const folder = mkdtempSync(join(tmpdir(), 'episcope-bench-learn-'));
  try {
    const path = join(folder, 'ring.mdp.ts');
    writeFileSync(path, RING_SPEC);
    const started = await ModelSandbox.start(path, RING_SPEC);
    if (!started.value) throw new Error(`the bench model did not load: ${started.failure?.message}`);
    const { sandbox } = started.value;
    try {
      began = performance.now();
      const learned = await sandbox.learn(options);
      seconds = (performance.now() - began) / 1000;
      const steps = learned.value?.summary.spent.steps ?? 0;
      console.log(
        `learning in the sandbox: ${steps} steps in ${seconds.toFixed(2)} s (${Math.round(steps / seconds)} steps/s, thread start excluded)`,
      );
    } finally {
      await sandbox.close();
    }
    await checkWithJobs(folder);
  } finally {
    rmSync(folder, { recursive: true, force: true });
  }
}

/** A ring of 40 cells whose goal is the opposite cell: a random walk takes about 400 steps to get there. */
const WIDE_RING_SPEC = `import { defineMdp } from 'episcope';
export default defineMdp({
  name: 'wide-ring-bench',
  discount: 0.99,
  start: 0,
  actions: () => ['left', 'right'],
  sample(cell: number, action: string, rng: { chance(p: number): boolean }) {
    const move = rng.chance(0.2) ? 0 : action === 'right' ? 1 : -1;
    const next = (cell + move + 40) % 40;
    return { state: next, reward: next === 20 ? 1 : 0, terminal: next === 20 ? ('goal' as const) : undefined };
  },
});
`;

/** Wall time of a whole check of the wide ring at --jobs 1 and 2, each after a run that warms its children. */
async function checkWithJobs(folder: string): Promise<void> {
  const path = join(folder, 'wide-ring.mdp.ts');
  writeFileSync(path, WIDE_RING_SPEC);
  const times: string[] = [];
  let first: string | undefined;
  let work = '';
  for (const jobs of [1, 2]) {
    const config = resolveConfig({ rollouts: 5000, jobs });
    await analyzeFile(path, WIDE_RING_SPEC, { config });
    const began = performance.now();
    const report = await analyzeFile(path, WIDE_RING_SPEC, { config });
    times.push(`--jobs ${jobs}: ${((performance.now() - began) / 1000).toFixed(2)} s`);
    const figures = JSON.stringify(report.rollouts);
    first ??= figures;
    if (figures !== first) throw new Error(`--jobs ${jobs} changed the figures`);
    const random = report.rollouts?.random;
    const spent = report.rollouts?.learning?.spent;
    work = `${random?.episodes ?? 0} rollouts of ${Math.round(random?.length.mean ?? 0)} steps on average, ${spent?.steps ?? 0} learning steps`;
  }
  console.log(`sampled check of a 40-cell ring (${work}; warm children): ${times.join(', ')}; the same figures`);
}
