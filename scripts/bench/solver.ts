/**
 * The `solver` section: whole `episcope check` runs (the built CLI, `node dist/cli.js check FILE
 * --format json`) on specs this section generates itself (scripts/bench/generators.ts), with the
 * issue's target beside each time, the widest printed bound, the solver's counters when the JSON
 * reports them, and the start's figures next to closed forms (walks) or an independent policy
 * iteration with scipy (where python3 has scipy) to check them by eye.
 *
 * Environment variables: BENCH_SOLVER_QUICK=1 runs only the small specs (50x50 grids, walks of
 * 1000); BENCH_SOLVER_ONLY=a,b runs only the specs whose name contains one of the words;
 * BENCH_SOLVER_LIMIT=S stops any run after S seconds (default 120) and prints "over S s".
 */
import { spawn, spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { JsonAnalysis, JsonFile, JsonInterval } from '../../server/src/cli/json-output';
import { randomTypeScriptSpec, randomWalkSpec, slipperyGridSpec, walkTruth, type GeneratedSpec } from './generators';

interface BenchSpec {
  name: string;
  /** Known before the run for JSON specs; a TypeScript model's count comes from its analysis. */
  states?: number;
  /** Run by BENCH_SOLVER_QUICK=1. */
  small: boolean;
  /** The target time in seconds, whole `episcope check`. */
  target: number;
  file: string;
  /** The spec's text: JSON, or TypeScript source. */
  text: () => string;
  /** A closed form for the start's figures, when there is one. */
  truth?: { value: number; goal: number; failure: number; length: number };
  /** Whether the scipy script can read the spec (JSON specs only). */
  scipy: boolean;
}

interface RunResult {
  outcome: 'done' | 'over' | 'failed';
  seconds: number;
  code: number | null;
  stdout: string;
  stderr: string;
}

const json = (spec: GeneratedSpec) => (): string => JSON.stringify(spec);

function specs(): BenchSpec[] {
  const out: BenchSpec[] = [];
  for (const size of [50, 100]) {
    for (const discount of [0.9, 0.99, 0.999, 1]) {
      out.push({
        name: `grid ${size}x${size} discount ${discount}`,
        states: size * size,
        small: size === 50,
        target: 3,
        file: `grid-${size}-${discount}.mdp.json`,
        text: () => JSON.stringify(slipperyGridSpec({ size, discount })),
        scipy: true,
      });
    }
  }
  for (const n of [1000, 10_000]) {
    for (const up of [0.5, 0.49]) {
      const start = Math.floor(n / 2);
      const truth = walkTruth(n, up, start);
      out.push({
        name: `${up === 0.5 ? 'fair walk' : `walk up ${up}`} 0..${n}`,
        states: n + 1,
        small: n === 1000,
        target: n === 1000 ? 1 : 4,
        file: `walk-${n}-${up}.mdp.json`,
        text: json(randomWalkSpec({ n, up, start })),
        // Reaching n pays 1 and nothing else pays: the value is the probability of reaching n.
        truth: { value: truth.goal, goal: truth.goal, failure: truth.failure, length: truth.duration },
        scipy: true,
      });
    }
  }
  out.push({
    name: 'random TypeScript 100k x 4 x 8',
    small: false,
    target: 30,
    file: 'random-100k.mdp.ts',
    text: () => randomTypeScriptSpec({ states: 100_000, actions: 4, outcomes: 8, seed: 20240602, discount: 0.95 }),
    scipy: false,
  });
  return out;
}

/** Process groups of the runs in progress and the folder of generated specs, cleaned up when the section is interrupted. */
const running = new Set<number>();
let specFolder: string | undefined;
let stopOnSignal = false;
function stopRunsOnSignal(): void {
  if (stopOnSignal) return;
  stopOnSignal = true;
  for (const signal of ['SIGINT', 'SIGTERM'] as const) {
    process.once(signal, () => {
      for (const group of running) killGroup(group);
      if (specFolder) rmSync(specFolder, { recursive: true, force: true });
      process.exit(130);
    });
  }
}

function killGroup(group: number): void {
  try {
    process.kill(-group, 'SIGKILL');
  } catch {
    // Already gone.
  }
}

/** Runs a command with a time limit; past it the whole process group is killed. */
function runLimited(
  command: string,
  args: readonly string[],
  limitSeconds: number,
  env?: NodeJS.ProcessEnv,
): Promise<RunResult> {
  return new Promise((resolve) => {
    const began = performance.now();
    // A group of its own, so that whatever the run starts is stopped with it.
    const child = spawn(command, args, { detached: true, stdio: ['ignore', 'pipe', 'pipe'], env: env ?? process.env });
    const stdout: Buffer[] = [];
    const stderr: Buffer[] = [];
    child.stdout.on('data', (chunk: Buffer) => stdout.push(chunk));
    child.stderr.on('data', (chunk: Buffer) => stderr.push(chunk));
    let over = false;
    if (child.pid !== undefined) running.add(child.pid);
    const timer = setTimeout(() => {
      over = true;
      if (child.pid !== undefined) killGroup(child.pid);
    }, limitSeconds * 1000);
    const finish = (code: number | null, failed: boolean) => {
      clearTimeout(timer);
      if (child.pid !== undefined) running.delete(child.pid);
      resolve({
        outcome: over ? 'over' : failed ? 'failed' : 'done',
        seconds: (performance.now() - began) / 1000,
        code,
        stdout: Buffer.concat(stdout).toString('utf8'),
        stderr: Buffer.concat(stderr).toString('utf8'),
      });
    };
    child.on('error', (error) => {
      stderr.push(Buffer.from(error.message));
      finish(null, true);
    });
    child.on('close', (code) => finish(code, false));
  });
}

/** The analysis part of the JSON output, with the solver counters the analysis may add. */
type CheckedAnalysis = JsonAnalysis & { solver?: { sweeps?: unknown; solves?: unknown; krylovIterations?: unknown } };

const finite = (x: unknown): x is number => typeof x === 'number' && Number.isFinite(x);
/** An interval's width; an exactly known infinite value ("-inf" to "-inf") is 0 wide. */
const width = (i: JsonInterval | undefined): number => {
  if (!i) return Infinity;
  if (i.lower === i.upper) return 0;
  return finite(i.lower) && finite(i.upper) ? i.upper - i.lower : Infinity;
};

/** Six significant digits; "inf" and friends as written. */
function figure(x: unknown): string {
  if (x === undefined || x === null) return '-';
  if (typeof x !== 'number') return String(x);
  if (x === 0) return '0';
  const abs = Math.abs(x);
  return abs >= 1e7 || abs < 1e-4 ? x.toExponential(5) : String(Number(x.toPrecision(6)));
}

/** Seconds with about three significant digits. */
const secondsText = (x: number): string => `${x >= 10 ? x.toFixed(1) : x >= 0.1 ? x.toFixed(2) : x.toFixed(3)} s`;

/** An interval as one figure when both ends print the same, else as [lower, upper]. */
function interval(i: JsonInterval | undefined): string {
  if (!i) return '-';
  const lower = figure(i.lower);
  const upper = figure(i.upper);
  return lower === upper ? lower : `[${lower}, ${upper}]`;
}

interface Row {
  spec: string;
  states: string;
  check: string;
  target: string;
  widest: string;
  sweeps: string;
  solves: string;
  value: string;
  reach: string;
  length: string;
  truth: string;
  scipy: string;
  ratio: string;
}

const COLUMNS: ReadonlyArray<[keyof Row, string, number]> = [
  ['spec', 'spec', 32],
  ['states', 'states', 8],
  ['check', 'check', 10],
  ['target', 'target', 8],
  ['widest', 'widest bound', 13],
  ['sweeps', 'sweeps', 7],
  ['solves', 'solves (its)', 14],
  ['value', 'V*(start)', 26],
  ['reach', 'random: goal / failure', 24],
  ['length', 'random length', 14],
  ['truth', 'truth: P(goal) / length', 26],
  ['scipy', 'scipy PI', 9],
  ['ratio', 'ratio', 7],
];

const line = (row: Row): string =>
  COLUMNS.map(([key, , size]) => row[key].padEnd(size))
    .join(' ')
    .trimEnd();
const header = (): Row => Object.fromEntries(COLUMNS.map(([key, title]) => [key, title])) as unknown as Row;

/** The row of one `episcope check --format json` run. */
function checkRow(spec: BenchSpec, run: RunResult, limit: number): { row: Row; seconds?: number } {
  const row: Row = { ...header(), spec: spec.name, target: `<= ${spec.target} s`, truth: '-', scipy: '-', ratio: '-' };
  for (const key of ['states', 'widest', 'sweeps', 'solves', 'value', 'reach', 'length'] as const) row[key] = '-';
  if (spec.states !== undefined) row.states = String(spec.states);
  if (spec.truth) row.truth = `${figure(spec.truth.goal)} / ${figure(spec.truth.length)}`;
  if (run.outcome === 'over') return { row: { ...row, check: `over ${limit} s` } };
  let report: { files?: Array<Omit<JsonFile, 'analysis'> & { analysis?: CheckedAnalysis }> } | undefined;
  try {
    report = JSON.parse(run.stdout);
  } catch {
    const why = run.stderr.trim().split('\n')[0] || `exit code ${run.code}`;
    return { row: { ...row, check: 'failed', value: why.slice(0, 60) } };
  }
  const file = report?.files?.[0];
  row.check = secondsText(run.seconds);
  const analysis = file?.analysis;
  if (!analysis)
    return {
      row: {
        ...row,
        value: `not analysed: ${file?.notAnalysed ?? file?.internalErrors?.[0] ?? 'no reason given'}`.slice(0, 60),
      },
      seconds: run.seconds,
    };
  const start = analysis.start;
  row.states = String(analysis.states);
  const precision = analysis.precision;
  const widest = Math.max(
    width(start.optimal),
    width(start.worst),
    width(start.random),
    finite(precision) ? precision : Infinity,
  );
  row.widest = Number.isFinite(widest) ? widest.toExponential(2) : 'inf';
  // Counters the analysis may report; "-" until it does.
  const solver = analysis.solver;
  row.sweeps = finite(solver?.sweeps) ? String(solver.sweeps) : '-';
  // Krylov iterations count the solver's work whatever the machine's load.
  row.solves = finite(solver?.solves)
    ? `${solver.solves}${finite(solver?.krylovIterations) ? ` (${solver.krylovIterations})` : ''}`
    : '-';
  row.value = interval(start.optimal);
  row.reach = `${figure(start.reach?.random?.goal)} / ${figure(start.reach?.random?.failure)}`;
  row.length = figure(start.expectedLength?.random);
  return { row, seconds: run.seconds };
}

function scipyAvailable(): boolean {
  const probe = spawnSync('python3', ['-c', 'import scipy, numpy'], { stdio: 'ignore', timeout: 30_000 });
  return probe.status === 0;
}

/** The scipy script beside this section's source, from the bundle in dist/ or from the source folder. */
function scipyScript(): string | undefined {
  return [
    join(__dirname, '..', 'scripts', 'bench', 'scipy-policy-iteration.py'),
    join(__dirname, 'scipy-policy-iteration.py'),
  ].find((path) => existsSync(path));
}

/** The 1M x 4 x 8 figure of the `analysis` section, run as its own process so the time limit holds. */
async function timeToBounds(limit: number): Promise<Row> {
  const row: Row = {
    ...header(),
    spec: 'random 1M x 4 x 8, V* to 1e-6',
    states: '1000000',
    target: '<= 5 s',
    truth: '-',
    scipy: '-',
    ratio: '-',
  };
  for (const key of ['widest', 'sweeps', 'solves', 'value', 'reach', 'length'] as const) row[key] = '-';
  const run = await runLimited(process.execPath, [process.argv[1], 'analysis'], limit, {
    ...process.env,
    BENCH_BOUNDS_ONLY: '1',
    BENCH_STATES: '1000000',
  });
  if (run.outcome === 'over') return { ...row, check: `over ${limit} s` };
  const solved =
    /time to V\* bounds of width <= 1e-6: ([\d.]+) s, (\d+) sweeps, widest bound (\S+), V\*\(start\) in \[(\S+), (\S+)\]/.exec(
      run.stdout,
    );
  if (!solved)
    return { ...row, check: 'failed', value: (run.stderr.trim().split('\n')[0] || 'no figure printed').slice(0, 60) };
  const prepared = /graph preparation \(predecessors, SCCs, end components\): ([\d.]+) s/.exec(run.stdout);
  return {
    ...row,
    check: secondsText(Number(solved[1])),
    widest: solved[3],
    sweeps: solved[2],
    value: interval({ lower: Number(solved[4]), upper: Number(solved[5]) }),
    length: prepared ? `(+${prepared[1]} s graph)` : '-',
  };
}

/** The `solver` section of `npm run bench`. */
export async function run(): Promise<void> {
  const limit = Number(process.env.BENCH_SOLVER_LIMIT ?? 120);
  if (!(limit > 0))
    throw new Error(`BENCH_SOLVER_LIMIT must be a positive number of seconds, not '${process.env.BENCH_SOLVER_LIMIT}'`);
  const quick = process.env.BENCH_SOLVER_QUICK === '1';
  const only = (process.env.BENCH_SOLVER_ONLY ?? '')
    .split(',')
    .map((word) => word.trim())
    .filter(Boolean);
  // A word that is a whole spec name picks that spec alone ("grid 100x100 discount 0.9" not also 0.99).
  const names = specs().map((spec) => spec.name);
  const wanted = (name: string) =>
    only.length === 0 || only.some((word) => (names.includes(word) ? name === word : name.includes(word)));
  stopRunsOnSignal();
  const cli = join(__dirname, 'cli.js');
  if (!existsSync(cli)) throw new Error(`the built CLI is missing at ${cli}: run 'node scripts/bundle.mjs' first`);
  const script = scipyScript();
  const scipy = script !== undefined && scipyAvailable();

  console.log(
    `whole 'episcope check --format json' per spec (generated, our own), time limit ${limit} s per run${quick ? ', small specs only' : ''}`,
  );
  console.log(
    scipy
      ? "scipy PI: in-process time of a policy iteration with a sparse direct solve per evaluation, plus the random policy's reach and length solves (file loading excluded); ratio = check / scipy PI"
      : 'scipy PI: skipped (python3 with scipy and numpy is not available)',
  );
  console.log(line(header()));
  const folder = mkdtempSync(join(tmpdir(), 'episcope-solver-bench-'));
  specFolder = folder;
  try {
    for (const spec of specs()) {
      if ((quick && !spec.small) || !wanted(spec.name)) continue;
      const path = join(folder, spec.file);
      writeFileSync(path, spec.text());
      const checked = await runLimited(process.execPath, [cli, 'check', path, '--format', 'json'], limit);
      const { row, seconds } = checkRow(spec, checked, limit);
      let reference: Record<string, number> | undefined;
      if (scipy && spec.scipy) {
        const solved = await runLimited('python3', [script!, path], limit);
        if (solved.outcome === 'over') row.scipy = `over ${limit} s`;
        else {
          try {
            reference = JSON.parse(solved.stdout) as Record<string, number>;
            row.scipy = secondsText(reference.seconds);
            // A check cut by the limit took at least the limit: the ratio is then a lower bound.
            if (reference.seconds > 0)
              row.ratio =
                seconds !== undefined
                  ? `${(seconds / reference.seconds).toFixed(1)}x`
                  : checked.outcome === 'over'
                    ? `> ${(limit / reference.seconds).toFixed(0)}x`
                    : '-';
          } catch {
            row.scipy = 'failed';
          }
        }
      }
      console.log(line(row));
      if (reference) {
        console.log(
          `${''.padEnd(COLUMNS[0][2])}   scipy: V*(start) ${figure(reference.optimal)}, random goal / failure ${figure(reference.reachGoal)} / ${figure(reference.reachFailure)}, random length ${figure(reference.length)} (${reference.rounds} improvement rounds)`,
        );
      }
      rmSync(path, { force: true });
    }
    if (!quick && wanted('random 1M')) console.log(line(await timeToBounds(limit)));
  } finally {
    rmSync(folder, { recursive: true, force: true });
    specFolder = undefined;
  }
}
