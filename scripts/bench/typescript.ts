/**
 * Figures for TypeScript specs: the enumeration rate of a model with about 100k states, and
 * rollout steps per second in the sandbox (a child process) against the same model called directly
 * in one loop, and the sandbox's start, cold and warm.
 * The model is a windy grid of our own (316 x 316 cells, four moves, three outcomes each). First, the
 * seeded random model of generators.ts (BENCH_TS_STATES states, default 1,000,000; 0 skips it) loaded
 * through the whole pipeline, with its time and the peak memory of this process and of the child;
 * BENCH_TS_LARGE_ONLY=1 prints only that line.
 */
import { mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { resourceUsage } from 'node:process';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { compileFunction } from 'node:vm';
import { resolveConfig } from '../../server/src/config';
import { loadTypeScriptSpec } from '../../server/src/sandbox/analyze-typescript';
import { bundleModel } from '../../server/src/sandbox/bundle';
import { randomTypeScriptSpec } from './generators';
import { endIdleSandboxes, ModelSandbox } from '../../server/src/sandbox/host';
import { buildEmpiricalModel } from '../../server/src/model/empirical';
import { LOOP_CHECK } from '../../server/src/sandbox/protocol';
import { enumerateModel, rolloutModel, type ModelFunctions } from '../../server/src/sandbox/runtime';
import { TransitionRecorder } from '../../server/src/sandbox/transition-record';

export const GRID_SPEC = `import { defineMdp } from 'episcope';

const SIZE = 316;
const MOVES: Record<string, [number, number]> = { north: [0, -1], south: [0, 1], east: [1, 0], west: [-1, 0] };
const clamp = (v: number) => (v < 0 ? 0 : v >= SIZE ? SIZE - 1 : v);
const at = (x: number, y: number) => ({ x: clamp(x), y: clamp(y) });

export default defineMdp({
  name: 'windy-grid-bench',
  discount: 0.99,
  start: { x: 0, y: 0 },
  actions: () => ['north', 'south', 'east', 'west'],
  terminal: (p: { x: number; y: number }) => (p.x === SIZE - 1 && p.y === SIZE - 1 ? 'goal' : undefined),
  outcomes(p: { x: number; y: number }, action: string) {
    const [dx, dy] = MOVES[action];
    return [
      { state: at(p.x + dx, p.y + dy), probability: 0.8, reward: -1 },
      { state: at(p.x + dy, p.y + dx), probability: 0.1, reward: -1 },
      { state: at(p.x - dy, p.y - dx), probability: 0.1, reward: -1 },
    ];
  },
  sample(p: { x: number; y: number }, action: string, rng: () => number) {
    const [dx, dy] = MOVES[action];
    const u = rng();
    const state = u < 0.8 ? at(p.x + dx, p.y + dy) : u < 0.9 ? at(p.x + dy, p.y + dx) : at(p.x - dy, p.y - dx);
    return { state, reward: -1, terminal: state.x === SIZE - 1 && state.y === SIZE - 1 ? ('goal' as const) : undefined };
  },
});
`;

export interface TypeScriptFigures {
  states: number;
  choices: number;
  outcomes: number;
  enumerationSeconds: number;
  /** CPU time of the whole process (all threads) during the enumeration: steadier than wall time on a shared machine. */
  enumerationCpuSeconds: number;
  /** Outcomes (state, action, next state) listed per second, model calls included. */
  transitionsPerSecond: number;
  /** The same enumeration with the model called directly in this process. */
  directTransitionsPerSecond: number;
  rolloutSteps: number;
  sandboxStepsPerSecond: number;
  directStepsPerSecond: number;
  /** Bundling, starting the child process and loading the model, cold and with the child kept warm. */
  coldStartSeconds: number;
  warmStartSeconds: number;
}

const ROLLOUTS = { episodes: 2000, seed: 1, discount: 0.99, stepCap: 1000, declaredTerms: [], fingerprintEpisodes: 0 };

export async function measureTypeScript(): Promise<TypeScriptFigures> {
  const folder = mkdtempSync(join(tmpdir(), 'episcope-bench-'));
  const path = join(folder, 'grid.mdp.ts');
  writeFileSync(path, GRID_SPEC);
  try {
    const limits = { callTimeoutMs: 5000, memoryMb: 1024, jobTimeoutMs: 600_000 };
    endIdleSandboxes();
    const coldBegan = performance.now();
    const started = await ModelSandbox.start(path, GRID_SPEC, limits);
    const coldStartSeconds = (performance.now() - coldBegan) / 1000;
    if (!started.value) throw new Error(`the bench model failed: ${started.failure?.message}`);
    const { sandbox } = started.value;
    const began = performance.now();
    const cpuBefore = process.cpuUsage();
    const enumerated = await sandbox.enumerate({ stateCap: 200_000, declaredTerms: [], recheckChoices: 0 });
    const enumerationSeconds = (performance.now() - began) / 1000;
    const cpu = process.cpuUsage(cpuBefore);
    const enumerationCpuSeconds = (cpu.user + cpu.system) / 1e6;
    const result = enumerated.value;
    if (!result || result.problem || result.capped) throw new Error('the bench model did not enumerate');

    // Warm both paths once, then time them.
    await sandbox.rollouts({ ...ROLLOUTS, episodes: 50 });
    const sandboxBegan = performance.now();
    const inSandbox = await sandbox.rollouts(ROLLOUTS);
    const sandboxSeconds = (performance.now() - sandboxBegan) / 1000;
    await sandbox.close();
    const steps = inSandbox.value!.records.lengths.reduce((a, b) => a + b, 0);
    // The language server re-analysing the same file: the child waits warm for the same bundle.
    const warmBegan = performance.now();
    const again = await ModelSandbox.start(path, GRID_SPEC, limits);
    const warmStartSeconds = (performance.now() - warmBegan) / 1000;
    await again.value?.sandbox.close();
    endIdleSandboxes();

    const direct = await loadDirectly(path);
    const progress = new Int32Array(5);
    rolloutModel(direct, { ...ROLLOUTS, episodes: 50, progress });
    const directBegan = performance.now();
    const run = rolloutModel(direct, { ...ROLLOUTS, progress });
    const directSeconds = (performance.now() - directBegan) / 1000;
    const directSteps = run.records.lengths.reduce((a, b) => a + b, 0);
    const directEnumerationBegan = performance.now();
    const directEnumeration = enumerateModel(direct, {
      stateCap: 200_000,
      declaredTerms: [],
      recheckChoices: 0,
      progress,
    });
    const directEnumerationSeconds = (performance.now() - directEnumerationBegan) / 1000;

    return {
      states: result.stateKeys.length,
      choices: result.choiceAction.length,
      outcomes: result.outcomesListed,
      enumerationSeconds,
      enumerationCpuSeconds,
      transitionsPerSecond: result.outcomesListed / enumerationSeconds,
      directTransitionsPerSecond: directEnumeration.outcomesListed / directEnumerationSeconds,
      rolloutSteps: steps,
      sandboxStepsPerSecond: steps / sandboxSeconds,
      directStepsPerSecond: directSteps / directSeconds,
      coldStartSeconds,
      warmStartSeconds,
    };
  } finally {
    rmSync(folder, { recursive: true, force: true });
  }
}

/** The same bundle, evaluated in this thread: the model called directly, with no child process in between. */
async function loadDirectly(path: string): Promise<ModelFunctions> {
  const bundle = await bundleModel(path, GRID_SPEC);
  if (!('code' in bundle)) throw new Error(bundle.message);
  // The bundle's loops call the sandbox's loop check; here it does nothing.
  (globalThis as Record<string, unknown>)[LOOP_CHECK] = () => undefined;
  const module = { exports: {} as Record<string, unknown> };
  compileFunction(bundle.code, ['exports', 'require', 'module'])(module.exports, require, module);
  return module.exports.default as ModelFunctions;
}

/**
 * What counting transitions and the exploration pass cost: the default 1000 random rollouts of a
 * 30 x 30 slippery grid of our own (900 keys, four moves), called directly, with and without the
 * recorder and the exploration pass at the default budget, and the empirical model built from them.
 */
export function measureRecording(): {
  plain: { episodes: number; steps: number };
  plainSeconds: number;
  recordedSeconds: number;
  buildSeconds: number;
  episodes: number;
  steps: number;
  exploreSamples: number;
  states: number;
} {
  const size = 30;
  const moves: Record<string, [number, number]> = { north: [0, -1], south: [0, 1], east: [1, 0], west: [-1, 0] };
  const clamp = (v: number) => Math.min(size - 1, Math.max(0, v));
  const grid: ModelFunctions = {
    start: { x: 0, y: 0 },
    actions: () => ['north', 'south', 'east', 'west'],
    sample: (state, action, rng) => {
      const p = state as { x: number; y: number };
      const [dx, dy] = moves[action as string];
      const slip = rng() < 0.2;
      const next = { x: clamp(p.x + (slip ? dy : dx)), y: clamp(p.y + (slip ? dx : dy)) };
      return { state: next, reward: -1, terminal: next.x === size - 1 && next.y === size - 1 ? 'goal' : undefined };
    },
  };
  const options = {
    episodes: 1000,
    seed: 1,
    discount: 0.99,
    stepCap: 10_000,
    declaredTerms: [],
    fingerprintEpisodes: 0,
    progress: new Int32Array(5),
  };
  let began = performance.now();
  const plainRun = rolloutModel(grid, options);
  const plain = { episodes: plainRun.completed, steps: plainRun.records.lengths.reduce((a, b) => a + b, 0) };
  const plainSeconds = (performance.now() - began) / 1000;
  began = performance.now();
  const recorder = new TransitionRecorder(
    grid,
    { keyCap: 5000, tries: 30, exploreBudget: 100_000, countedSteps: 200_000 },
    [],
    options.progress,
  );
  rolloutModel(grid, options, recorder);
  recorder.explore(options.seed, []);
  const counts = recorder.result();
  const recordedSeconds = (performance.now() - began) / 1000;
  began = performance.now();
  const built = buildEmpiricalModel(counts, {
    discount: 0.99,
    maximize: true,
    terms: [],
    span: { start: 0, end: 0 },
    tolerance: 0.1,
    declaredKinds: new Set(),
  });
  const buildSeconds = (performance.now() - began) / 1000;
  return {
    plain,
    plainSeconds,
    recordedSeconds,
    buildSeconds,
    episodes: counts.episodes,
    steps: counts.steps,
    exploreSamples: counts.exploreSamples,
    states: built.model?.stateCount ?? 0,
  };
}

/** The `typescript` section of `npm run bench`. */
export async function run(): Promise<void> {
  for (const line of await typescriptBenchLines()) console.log(line);
}

/** Lines for `npm run bench`. */
export async function typescriptBenchLines(): Promise<string[]> {
  // The large model first: this process's peak memory never decreases, so it is read before anything else runs.
  const largeStates = Number(process.env.BENCH_TS_STATES ?? 1_000_000);
  const large = largeStates > 0 ? [largeEnumerationLine(await measureLargeEnumeration(largeStates))] : [];
  if (process.env.BENCH_TS_LARGE_ONLY === '1') return large;
  const f = await measureTypeScript();
  const r = measureRecording();
  const millions = (x: number) => `${(x / 1e6).toFixed(2)} M`;
  return [
    ...large,
    `TypeScript enumeration: ${f.states} states, ${f.choices} (state, action) pairs, ${f.outcomes} outcomes in ${f.enumerationSeconds.toFixed(2)} s: ${millions(f.transitionsPerSecond)} transitions/s (target >= 1 M); host CPU time ${f.enumerationCpuSeconds.toFixed(2)} s; called directly ${millions(f.directTransitionsPerSecond)} transitions/s`,
    `TypeScript sandbox start (bundle, child process, load): cold ${(1000 * f.coldStartSeconds).toFixed(0)} ms, warm (same bundle again) ${(1000 * f.warmStartSeconds).toFixed(0)} ms`,
    `TypeScript rollouts: ${f.rolloutSteps} steps; sandbox ${millions(f.sandboxStepsPerSecond)} steps/s, direct ${millions(f.directStepsPerSecond)} steps/s: ${((100 * f.sandboxStepsPerSecond) / f.directStepsPerSecond).toFixed(0)}% of direct (target >= 50%)`,
    `Empirical model: ${r.plain.episodes} rollouts (${r.plain.steps} steps) ${r.plainSeconds.toFixed(2)} s plain, ${r.recordedSeconds.toFixed(2)} s with ${r.episodes} episodes (${r.steps} steps) counted and explored (${r.exploreSamples} exploration samples); ${r.states} states built in ${r.buildSeconds.toFixed(3)} s (target: a few seconds in all)`,
  ];
}

export interface LargeEnumerationFigures {
  states: number;
  outcomes: number;
  /** Loading the spec: reading it, bundling, the child's enumeration and the host's CSR model. */
  seconds: number;
  /** The enumeration job alone: the child's listing, its reply parts and their assembly in this process. */
  enumerationSeconds: number;
  /** Peak resident memory of this process and of the sandbox child, in bytes. */
  hostPeakBytes: number;
  childPeakBytes: number;
}

/** Peak resident memory (VmHWM) of every process whose parent is this one, summed; 0 where /proc is missing. */
function childrenPeakBytes(): number {
  let total = 0;
  try {
    for (const entry of readdirSync('/proc')) {
      if (!/^\d+$/.test(entry)) continue;
      let status: string;
      try {
        status = readFileSync(`/proc/${entry}/status`, 'utf8');
      } catch {
        continue;
      }
      if (Number(/PPid:\s+(\d+)/.exec(status)?.[1]) !== process.pid) continue;
      total += Number(/VmHWM:\s+(\d+) kB/.exec(status)?.[1] ?? 0) * 1024;
    }
  } catch {
    return 0;
  }
  return total;
}

/**
 * The seeded random model of `generators.ts` (states x 4 actions x 8 outcomes) loaded through the
 * whole TypeScript pipeline: enumeration in the sandbox child and the CSR model in this process.
 * The child is kept warm after the job, so its peak can still be read from /proc.
 */
export async function measureLargeEnumeration(states: number): Promise<LargeEnumerationFigures> {
  const folder = mkdtempSync(join(tmpdir(), 'episcope-bench-'));
  const path = join(folder, 'random.mdp.ts');
  const text = randomTypeScriptSpec({ states, actions: 4, outcomes: 8, seed: 20240602, discount: 0.95 });
  writeFileSync(path, text);
  try {
    endIdleSandboxes();
    const thresholds = {
      'model-error.memoryMb': 4096,
      'model-error.jobTimeoutMs': 600_000,
      'model-error.callTimeoutMs': 10_000,
    };
    const config = resolveConfig({ stateCap: states + 1, thresholds });
    const began = performance.now();
    const loaded = await loadTypeScriptSpec(path, text, { config, exec: true });
    const seconds = (performance.now() - began) / 1000;
    const model = loaded.enumerated?.model;
    if (!model) throw new Error(`the large bench model did not enumerate: ${loaded.enumerated?.reason ?? 'no model'}`);
    const enumerationMs = loaded.spec.typescript?.enumeration?.milliseconds;
    if (enumerationMs === undefined) throw new Error('the pipeline did not time the enumeration');
    const childPeakBytes = childrenPeakBytes();
    endIdleSandboxes();
    return {
      states: model.stateCount,
      outcomes: model.outcomeCount,
      seconds,
      enumerationSeconds: enumerationMs / 1000,
      hostPeakBytes: resourceUsage().maxRSS * 1024,
      childPeakBytes,
    };
  } finally {
    rmSync(folder, { recursive: true, force: true });
  }
}

function largeEnumerationLine(f: LargeEnumerationFigures): string {
  const perTransition = (bytes: number) =>
    `${Math.round(bytes / (1 << 20))} MB (${(bytes / f.outcomes).toFixed(1)} B per transition)`;
  return (
    `TypeScript random model ${f.states} states x 4 x 8: ${f.outcomes} transitions loaded in ${f.seconds.toFixed(2)} s (target < 10 s), ` +
    `of which the enumeration job ${f.enumerationSeconds.toFixed(2)} s (${(f.outcomes / f.enumerationSeconds / 1e6).toFixed(2)} M transitions/s, target >= 1 M); peak memory host ${perTransition(f.hostPeakBytes)} (target <= 40 B), sandbox child ${perTransition(f.childPeakBytes)}`
  );
}
