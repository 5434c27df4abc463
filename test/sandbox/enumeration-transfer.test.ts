/**
 * The model the pipeline builds from the sandbox child's reply (head over IPC, columns and keys
 * through the column file) against an independent listing written here: the same bundle called
 * in this process, states in breadth-first discovery order keyed by JSON with sorted object keys,
 * choices in the order `actions` lists them, zero-probability outcomes dropped. And the replies
 * that do not fit together become model-error findings, not crashes.
 */
import { closeSync, openSync, readFileSync, rmSync, writeSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { compileFunction } from 'node:vm';
import { describe, expect, it } from 'vitest';
import { resolveConfig } from '../../server/src/config';
import type { CompiledModel } from '../../server/src/model/compiled';
import { TERMINAL_CODE } from '../../server/src/model/compiled';
import { loadTypeScriptSpec } from '../../server/src/sandbox/analyze-typescript';
import { bundleModel } from '../../server/src/sandbox/bundle';
import { columnBytes, readColumns, writeColumns } from '../../server/src/sandbox/enumeration-columns';
import { validEnumeration } from '../../server/src/sandbox/host';
import { LOOP_CHECK } from '../../server/src/sandbox/protocol';
import { enumerateInChunks, enumerateModel, type ModelFunctions } from '../../server/src/sandbox/runtime';
import { randomTypeScriptSpec } from '../../scripts/bench/generators';
import { analyzeTs, findingsOf, writeFolder } from '../typescript/ts-specs';

/** JSON with object keys sorted at every level: what "the same state" means in the spec API. */
function sortedJson(value: unknown): string {
  return JSON.stringify(value, (_key, v: unknown) =>
    v && typeof v === 'object' && !Array.isArray(v)
      ? Object.fromEntries(Object.entries(v as Record<string, unknown>).sort(([a], [b]) => (a < b ? -1 : 1)))
      : v,
  );
}

interface Row {
  state: string;
  action: string;
  target: string;
  probability: number;
  reward: number;
  terms: Record<string, number>;
}

/** Loads the bundle in this process (no sandbox) and lists the model breadth first. */
async function independentListing(path: string, text: string) {
  const bundle = await bundleModel(path, text);
  if (!('code' in bundle)) throw new Error(bundle.message);
  (globalThis as Record<string, unknown>)[LOOP_CHECK] = () => undefined;
  const module = { exports: {} as Record<string, unknown> };
  compileFunction(bundle.code, ['exports', 'require', 'module'])(module.exports, require, module);
  const model = module.exports.default as Required<ModelFunctions>;
  const order: unknown[] = [model.start];
  const seen = new Set([sortedJson(model.start)]);
  const terminal: Record<string, number> = {};
  const rows: Row[] = [];
  for (let i = 0; i < order.length; i++) {
    const state = order[i];
    const key = sortedJson(state);
    const kind = model.terminal ? (model.terminal(state) as keyof typeof TERMINAL_CODE | undefined) : undefined;
    terminal[key] = kind ? TERMINAL_CODE[kind] : 0;
    if (kind) continue;
    for (const action of model.actions(state) as string[]) {
      for (const o of model.outcomes(state, action) as Array<{
        state: unknown;
        probability: number;
        reward: number | Record<string, number>;
      }>) {
        if (o.probability === 0) continue;
        const target = sortedJson(o.state);
        if (!seen.has(target)) {
          seen.add(target);
          order.push(o.state);
        }
        const terms = typeof o.reward === 'number' ? {} : o.reward;
        const reward = typeof o.reward === 'number' ? o.reward : Object.values(o.reward).reduce((a, b) => a + b, 0);
        rows.push({ state: key, action, target, probability: o.probability, reward, terms });
      }
    }
  }
  return { keys: order.map(sortedJson), terminal, rows };
}

/** The compiled model as rows of the same shape. */
function rowsOf(model: CompiledModel): Row[] {
  const rows: Row[] = [];
  for (let s = 0; s < model.stateCount; s++) {
    for (let c = model.choiceStart[s]; c < model.choiceStart[s + 1]; c++) {
      for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
        const terms: Record<string, number> = {};
        model.termNames.forEach((name, t) => {
          if (model.outcomeTermReward[t][k] !== 0) terms[name] = model.outcomeTermReward[t][k];
        });
        rows.push({
          state: model.stateIds[s],
          action: model.actionNames[model.choiceAction[c]],
          target: model.stateIds[model.outcomeTarget[k]],
          probability: model.outcomeProb[k],
          reward: model.outcomeReward[k],
          terms,
        });
      }
    }
  }
  return rows;
}

async function expectSameModel(path: string, text: string): Promise<CompiledModel> {
  const loaded = await loadTypeScriptSpec(path, text, {
    exec: true,
    config: resolveConfig({ thresholds: { 'model-error.callTimeoutMs': 10_000 } }),
  });
  const model = loaded.enumerated?.model;
  expect(model, loaded.enumerated?.reason).toBeDefined();
  const reference = await independentListing(path, text);
  expect(model!.stateIds).toEqual(reference.keys);
  expect(Array.from(model!.terminal)).toEqual(reference.keys.map((key) => reference.terminal[key]));
  // Zero term parts are left out on both sides: a term the outcome does not name is 0.
  const dropZeros = (rows: Row[]) =>
    rows.map((r) => ({ ...r, terms: Object.fromEntries(Object.entries(r.terms).filter(([, v]) => v !== 0)) }));
  expect(rowsOf(model!)).toEqual(dropZeros(reference.rows));
  expect(model!.outcomeCount).toBe(reference.rows.length);
  expect(Array.from(model!.startState)).toEqual([0]);
  expect(Array.from(model!.startProb)).toEqual([1]);
  // Spans: the start state points at `start`, every other state at `outcomes`.
  model!.stateSpan.forEach((span, s) => expect(text.slice(span.start, span.end)).toBe(s === 0 ? 'start' : 'outcomes'));
  return model!;
}

describe('the enumerated model that crosses the sandbox boundary', () => {
  // The one enumerable example (object states, reward terms); the others are sampled models.
  it('is the independent listing of examples/shelf-restocking.mdp.ts', async () => {
    const path = join(__dirname, '..', '..', 'examples', 'shelf-restocking.mdp.ts');
    const model = await expectSameModel(path, readFileSync(path, 'utf8'));
    expect(model.termNames).toEqual(['sales', 'purchasing', 'holding']);
  }, 60_000);

  for (const seed of [1, 77, 20240602]) {
    it(`is the independent listing of the seeded random TypeScript model (seed ${seed})`, async () => {
      const text = randomTypeScriptSpec({ states: 700, actions: 4, outcomes: 8, seed, discount: 0.9 });
      const folder = writeFolder({ 'random.mdp.ts': text });
      const model = await expectSameModel(join(folder, 'random.mdp.ts'), text);
      expect(model.outcomeCount).toBeGreaterThan(1000);
    }, 60_000);
  }

  it('is the independent listing when the outcomes fill several chunks (more than 2^18 outcomes)', async () => {
    const text = randomTypeScriptSpec({ states: 9000, actions: 4, outcomes: 8, seed: 5, discount: 0.9 });
    const folder = writeFolder({ 'random.mdp.ts': text });
    const model = await expectSameModel(join(folder, 'random.mdp.ts'), text);
    expect(model.outcomeCount).toBeGreaterThan(1 << 18);
  }, 120_000);
});

describe('a reply that does not fit together', () => {
  it('is a model-error finding when model code writes into the column file', async () => {
    const report = await analyzeTs(`import { defineMdp } from 'episcope';
import { writeSync } from 'node:fs';
export default defineMdp({
  name: 'column-writer',
  discount: 0.9,
  start: 0,
  actions: () => ['go'],
  terminal: (s: number) => (s === 3 ? 'goal' : undefined),
  outcomes(s: number) {
    // Past where the columns end, so the file no longer has the size the reply announces.
    writeSync(5, 'not columns', 100000);
    return [{ state: s + 1, probability: 1, reward: 1 }];
  },
});
`);
    const errors = findingsOf(report, 'model-error');
    expect(errors.map((f) => f.message).join('\n')).toMatch(
      /does not fit together: the column file holds \d+ bytes, not the \d+ of 3 outcomes and 4 state keys/,
    );
    expect(report.internalErrors).toEqual([]);
    expect(report.model).toBeUndefined();
  }, 60_000);

  /** A real enumeration's head and key listing, and a file holding its columns. */
  function writtenEnumeration() {
    const model = {
      start: 0,
      actions: () => ['a', 'b'],
      terminal: (s: unknown) => ((s as number) >= 5 ? 'goal' : undefined),
      outcomes: (s: unknown, a: unknown) => [
        { state: (s as number) + (a === 'a' ? 1 : 2), probability: 1, reward: 0.5 },
      ],
    };
    const chunks = enumerateInChunks(model as ModelFunctions, {
      stateCap: 100,
      declaredTerms: [],
      recheckChoices: 0,
      progress: new Int32Array(5),
    });
    const path = join(tmpdir(), `episcope-columns-test-${process.pid}-${Math.random()}`);
    const fd = openSync(path, 'w+');
    rmSync(path);
    const keys = writeColumns(fd, chunks, chunks.head.stateKeys);
    return {
      fd,
      keys,
      head: { ...chunks.head, stateKeys: [] as string[] },
      expected: enumerateModel(model as ModelFunctions, {
        stateCap: 100,
        declaredTerms: [],
        recheckChoices: 0,
        progress: new Int32Array(5),
      }),
    };
  }

  it('is read back whole when it fits, and the file is emptied', () => {
    const { fd, keys, head, expected } = writtenEnumeration();
    try {
      const result = readColumns(head, keys, fd);
      expect(result).toEqual(expected);
      expect(validEnumeration(result as typeof expected)).toBe(true);
      // Emptied: a second read of the same head finds no columns.
      expect(readColumns(head, keys, fd)).toMatch(/holds 0 bytes/);
    } finally {
      closeSync(fd);
    }
  });

  const broken: Array<[string, (w: ReturnType<typeof writtenEnumeration>) => unknown[]]> = [
    ['an outcome count that is not a whole number', (w) => [{ ...w.head, outcomesListed: 2.5 }, w.keys]],
    ['a negative outcome count', (w) => [{ ...w.head, outcomesListed: -1 }, w.keys]],
    ['more outcomes than the file holds', (w) => [{ ...w.head, outcomesListed: w.head.outcomesListed + 1 }, w.keys]],
    ['a key count that is not the number of lines', (w) => [w.head, { ...w.keys, count: w.keys.count + 1 }]],
    ['a key listing that is not numbers', (w) => [w.head, { count: '6', bytes: w.keys.bytes }]],
    ['no key listing', (w) => [w.head, undefined]],
    ['term names that are not strings', (w) => [{ ...w.head, termNames: [7] }, w.keys]],
    ['a head that is not an object', (w) => [null, w.keys]],
  ];
  for (const [what, change] of broken) {
    it(`is refused with a reason: ${what}`, () => {
      const written = writtenEnumeration();
      try {
        const [head, keys] = change(written);
        const result = readColumns(head as never, keys as never, written.fd);
        expect(typeof result).toBe('string');
      } finally {
        closeSync(written.fd);
      }
    });
  }

  it('is refused when bytes were added to the file', () => {
    const { fd, keys, head } = writtenEnumeration();
    try {
      writeSync(fd, 'x', columnBytes(head.outcomesListed, 0) + keys.bytes);
      expect(readColumns(head, keys, fd)).toMatch(/holds \d+ bytes, not the/);
    } finally {
      closeSync(fd);
    }
  });

  it('is refused by the shape check when row starts go backwards or the start states are unmatched', () => {
    const { expected } = writtenEnumeration();
    expect(validEnumeration(expected)).toBe(true);
    const outcomeStart = expected.outcomeStart.slice();
    [outcomeStart[1], outcomeStart[2]] = [outcomeStart[2], outcomeStart[1]];
    expect(validEnumeration({ ...expected, outcomeStart })).toBe(false);
    expect(validEnumeration({ ...expected, choiceStart: expected.choiceStart.subarray(1) })).toBe(false);
    expect(validEnumeration({ ...expected, startProbs: new Float64Array(0) })).toBe(false);
  });
});

describe('state lookup by value', () => {
  it('keys numbers (small, large, negative, -0, fractions) and strings as their JSON does', () => {
    // Targets jump past the flat table's reach first, so states met early are moved in when it grows.
    const next = (s: number): unknown[] => [
      s + 1,
      (s * 7_919_993) % 5_000_000,
      -s,
      s === 0 ? -0 : s / 4,
      String(s),
      2 ** 26 + s,
    ];
    const model = {
      start: 0,
      actions: () => ['go'],
      terminal: (s: unknown) =>
        typeof s !== 'number' || s >= 400 || s < 0 || !Number.isInteger(s) || s >= 2 ** 26 ? 'goal' : undefined,
      outcomes: (s: unknown) =>
        next(s as number).map((state, _i, all) => ({ state, probability: 1 / all.length, reward: 0 })),
    } as unknown as ModelFunctions;
    const listed = enumerateModel(model, {
      stateCap: 1e5,
      declaredTerms: [],
      recheckChoices: 0,
      progress: new Int32Array(5),
    });
    const order: unknown[] = [0];
    const index = new Map<string, number>([['0', 0]]);
    const targets: number[] = [];
    for (let i = 0; i < order.length; i++) {
      if (model.terminal!(order[i])) continue;
      for (const state of next(order[i] as number)) {
        const key = JSON.stringify(state);
        if (!index.has(key)) {
          index.set(key, order.length);
          order.push(state);
        }
        targets.push(index.get(key)!);
      }
    }
    expect(listed.stateKeys).toEqual(order.map((s) => JSON.stringify(s)));
    expect(Array.from(listed.outcomeTarget)).toEqual(targets);
  });
});
