/**
 * Figures for TypeScript specs: the enumeration rate of a model with about 100k states, and
 * rollout steps per second in the sandbox (a child process) against the same model called directly
 * in one loop, and the sandbox's start, cold and warm.
 * The model is a windy grid of our own (316 x 316 cells, four moves, three outcomes each).
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { compileFunction } from 'node:vm';
import { bundleModel } from '../../server/src/sandbox/bundle';
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
    const directEnumeration = enumerateModel(direct, { stateCap: 200_000, declaredTerms: [], recheckChoices: 0, progress });
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
export function measureRecording(): { plain: { episodes: number; steps: number }; plainSeconds: number; recordedSeconds: number; buildSeconds: number; episodes: number; steps: number; exploreSamples: number; states: number } {
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
  const options = { episodes: 1000, seed: 1, discount: 0.99, stepCap: 10_000, declaredTerms: [], fingerprintEpisodes: 0, progress: new Int32Array(5) };
  let began = performance.now();
  const plainRun = rolloutModel(grid, options);
  const plain = { episodes: plainRun.completed, steps: plainRun.records.lengths.reduce((a, b) => a + b, 0) };
  const plainSeconds = (performance.now() - began) / 1000;
  began = performance.now();
  const recorder = new TransitionRecorder(grid, { keyCap: 5000, tries: 30, exploreBudget: 100_000, countedSteps: 200_000 }, [], options.progress);
  rolloutModel(grid, options, recorder);
  recorder.explore(options.seed, []);
  const counts = recorder.result();
  const recordedSeconds = (performance.now() - began) / 1000;
  began = performance.now();
  const built = buildEmpiricalModel(counts, { discount: 0.99, maximize: true, terms: [], span: { start: 0, end: 0 }, tolerance: 0.1, declaredKinds: new Set() });
  const buildSeconds = (performance.now() - began) / 1000;
  return { plain, plainSeconds, recordedSeconds, buildSeconds, episodes: counts.episodes, steps: counts.steps, exploreSamples: counts.exploreSamples, states: built.model?.stateCount ?? 0 };
}

/** The `typescript` section of `npm run bench`. */
export async function run(): Promise<void> {
  for (const line of await typescriptBenchLines()) console.log(line);
}

/** Lines for `npm run bench`. */
export async function typescriptBenchLines(): Promise<string[]> {
  const f = await measureTypeScript();
  const r = measureRecording();
  const millions = (x: number) => `${(x / 1e6).toFixed(2)} M`;
  return [
    `TypeScript enumeration: ${f.states} states, ${f.choices} (state, action) pairs, ${f.outcomes} outcomes in ${f.enumerationSeconds.toFixed(2)} s: ${millions(f.transitionsPerSecond)} transitions/s (target >= 1 M); host CPU time ${f.enumerationCpuSeconds.toFixed(2)} s; called directly ${millions(f.directTransitionsPerSecond)} transitions/s`,
    `TypeScript sandbox start (bundle, child process, load): cold ${(1000 * f.coldStartSeconds).toFixed(0)} ms, warm (same bundle again) ${(1000 * f.warmStartSeconds).toFixed(0)} ms`,
    `TypeScript rollouts: ${f.rolloutSteps} steps; sandbox ${millions(f.sandboxStepsPerSecond)} steps/s, direct ${millions(f.directStepsPerSecond)} steps/s: ${((100 * f.sandboxStepsPerSecond) / f.directStepsPerSecond).toFixed(0)}% of direct (target >= 50%)`,
    `Empirical model: ${r.plain.episodes} rollouts (${r.plain.steps} steps) ${r.plainSeconds.toFixed(2)} s plain, ${r.recordedSeconds.toFixed(2)} s with ${r.episodes} episodes (${r.steps} steps) counted and explored (${r.exploreSamples} exploration samples); ${r.states} states built in ${r.buildSeconds.toFixed(3)} s (target: a few seconds in all)`,
  ];
}
