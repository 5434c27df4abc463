/**
 * The language server's pure parts, in-process: offset mapping through edits, the display of
 * sound intervals and probabilities, and the edits behind "ignore this rule here" (checked with the
 * config loader and the suppression code that the command line uses), and the scheduler handing
 * each analysis the last solution of its document (warm start).
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { analyzeJsonText } from '../../server/src/analyze';
import { parseConfigText } from '../../server/src/config-file';
import { DocumentStore } from '../../server/src/lsp/documents';
import { formatInterval, formatProbability } from '../../server/src/lsp/format';
import { ignoreCommentEdit, ignoreEntryEdit } from '../../server/src/lsp/ignore-edits';
import { mergeSettings, readSettings } from '../../server/src/lsp/settings';
import { resolveConfig } from '../../server/src/config';
import type { JobHandle, WorkerPool } from '../../server/src/lsp/pool';
import type { AnalysisSnapshot } from '../../server/src/lsp/protocol';
import { AnalysisScheduler, type JobInput } from '../../server/src/lsp/scheduler';
import { DEFAULT_SETTINGS } from '../../server/src/lsp/settings';
import { buildSnapshot } from '../../server/src/lsp/snapshot';
import { warehouseSpecText } from './warehouse-spec';

describe('DocumentStore offset mapping', () => {
  const uri = 'file:///x.mdp.json';
  const at = (line: number, character: number) => ({ line, character });

  it('maps offsets back to an older version and forward again, around inserts and deletions', () => {
    const store = new DocumentStore();
    store.open(uri, 'json', 1, 'abcdef\nghij');
    store.change(uri, 2, [{ range: { start: at(0, 2), end: at(0, 2) }, text: 'XYZ' }]); // abXYZcdef
    store.change(uri, 3, [{ range: { start: at(1, 0), end: at(1, 2) }, text: '' }]); // line 2: ij
    expect(store.get(uri)!.getText()).toBe('abXYZcdef\nij');
    // 'c' is at 5 now and was at 2 in version 1.
    expect(store.toVersion(uri, 5, 1)).toBe(2);
    expect(store.fromVersion(uri, 2, 1)).toBe(5);
    // 'i' is at 10 now and was at 9 in version 1 (+3 inserted, -2 deleted).
    expect(store.toVersion(uri, 10, 1)).toBe(9);
    expect(store.fromVersion(uri, 9, 1)).toBe(10);
    // Inserted or deleted text has no counterpart.
    expect(store.toVersion(uri, 3, 1)).toBeUndefined();
    expect(store.fromVersion(uri, 7, 1)).toBeUndefined();
    // Version 2 is reachable too; after forgetting, version 1 is not.
    expect(store.toVersion(uri, 10, 2)).toBe(12);
    store.forgetBefore(uri, 2);
    expect(store.toVersion(uri, 5, 1)).toBeUndefined();
    expect(store.toVersion(uri, 10, 2)).toBe(12);
  });

  it('round-trips every unchanged offset through random edits (property)', () => {
    fc.assert(
      fc.property(
        fc.string({ minLength: 1, maxLength: 40 }),
        fc.array(fc.tuple(fc.nat(), fc.nat(5), fc.string({ maxLength: 5 })), { maxLength: 6 }),
        (initial, edits) => {
          const store = new DocumentStore();
          const text0 = initial.replace(/[\r\n]/g, 'x');
          store.open(uri, 'json', 1, text0);
          // Track where each original character ends up by tagging it.
          let tagged = [...text0].map((ch, i) => ({ ch, origin: i as number | undefined }));
          let version = 1;
          for (const [rawStart, length, inserted] of edits) {
            const clean = inserted.replace(/[\r\n]/g, 'y');
            const start = rawStart % (tagged.length + 1);
            const end = Math.min(tagged.length, start + length);
            version++;
            store.change(uri, version, [{ range: { start: at(0, start), end: at(0, end) }, text: clean }]);
            tagged = [
              ...tagged.slice(0, start),
              ...[...clean].map((ch) => ({ ch, origin: undefined })),
              ...tagged.slice(end),
            ];
          }
          tagged.forEach((entry, now) => {
            expect(store.toVersion(uri, now, 1)).toBe(entry.origin);
            if (entry.origin !== undefined) expect(store.fromVersion(uri, entry.origin, 1)).toBe(now);
          });
        },
      ),
    );
  });
});

describe('interval and probability display', () => {
  it('shows one number only when it lies inside the interval (property)', () => {
    fc.assert(
      fc.property(
        fc.double({ min: -1e6, max: 1e6, noNaN: true }),
        fc.double({ min: 0, max: 1e-3, noNaN: true }),
        (lower, width) => {
          const upper = lower + width;
          const shown = formatInterval(lower, upper);
          if (shown.startsWith('[')) return;
          const value = Number(shown);
          // Four significant digits: the shown number is within half a unit of its last digit of a point inside.
          const tolerance = Math.max(Math.abs(value) * 5e-4, 5e-4 * Math.max(1, Math.abs(lower)));
          expect(value).toBeGreaterThanOrEqual(lower - tolerance);
          expect(value).toBeLessThanOrEqual(upper + tolerance);
        },
      ),
    );
  });

  it('reads [0, 9.98e-7] as 0 and keeps wide intervals as intervals', () => {
    expect(formatInterval(0, 9.98e-7)).toBe('0');
    expect(formatInterval(9.0909088, 9.0909093)).toBe('9.091');
    expect(formatInterval(1, 2)).toBe('[1, 2]');
    expect(formatInterval(5, Infinity)).toBe('[5, ∞]');
    expect(formatInterval(-Infinity, -Infinity)).toBe('-∞');
    // ASCII hyphen-minus, so that a number copied from a hover parses in code (U+2212 does not).
    expect(formatInterval(-12.5, -12.5)).toBe('-12.5');
    expect(Number(formatInterval(-3.25e-5, -3.25e-5))).toBe(-3.25e-5);
  });

  it('never shows a positive probability as 0% or one below 1 as 100%, except within the precision', () => {
    expect(formatProbability(1e-9)).toBe('<0.1%');
    expect(formatProbability(1 - 1e-9)).toBe('>99.9%');
    expect(formatProbability(1e-9, 1e-6)).toBe('0%');
    expect(formatProbability(1 - 1e-9, 1e-6)).toBe('100%');
    expect(formatProbability(0.0512)).toBe('5.1%');
    expect(formatProbability(0.97)).toBe('97%');
  });
});

describe('"ignore this rule here" edits', () => {
  const leaky = JSON.stringify(
    {
      discount: 0.9,
      start: 'a',
      actions: ['go'],
      states: { a: {}, g: { terminal: 'goal' } },
      transitions: [{ from: 'a', action: 'go', to: { g: 0.5, a: 0.4 }, reward: 1 }],
    },
    null,
    2,
  );

  it('appends to an existing ignore list, keeping comments and other entries', () => {
    const config =
      '{\n  // severities agreed in review\n  "rules": { "reward-scale": "off" },\n  "ignore": [\n    { "rule": "tiny-probability", "path": "a.mdp.json", "reason": "intended" }\n  ]\n}\n';
    const result = ignoreEntryEdit(config, 'probability-sum', 'specs/leaky.mdp.json')!;
    let text = config;
    for (const edit of [...result.edits].sort((a, b) => b.start - a.start))
      text = text.slice(0, edit.start) + edit.newText + text.slice(edit.end);
    expect(text).toContain('// severities agreed in review');
    const parsed = parseConfigText('/p/episcope.config.json', text);
    expect(parsed.config.rules).toEqual({ 'reward-scale': 'off' });
    // The empty reason is reported, and the new entry does not apply until a reason is written.
    expect(parsed.findings.map((f) => f.message).join('\n')).toMatch(/reason/);
    expect(parsed.config.ignore.map((e) => e.rule)).toEqual(['tiny-probability']);
    const lines = text.split('\n');
    expect(
      lines[result.reasonPosition.line].slice(result.reasonPosition.character - 1, result.reasonPosition.character + 1),
    ).toBe('""');
    // Once the reason is written, the command line's suppression hides the finding.
    const reasoned = parseConfigText(
      '/p/episcope.config.json',
      text.replace('"reason": ""', '"reason": "modelled elsewhere"'),
    );
    expect(reasoned.findings).toEqual([]);
    const report = analyzeJsonText('/p/specs/leaky.mdp.json', leaky, { config: reasoned.config });
    expect(report.findings.filter((f) => f.rule === 'probability-sum')).toEqual([]);
    expect(report.suppressed?.map((s) => s.finding.rule)).toEqual(['probability-sum']);
  });

  it('offers nothing for a config file that is not valid JSON or already ignores the rule there', () => {
    expect(ignoreEntryEdit('{ "ignore": [ ', 'probability-sum', 'x.mdp.json')).toBeUndefined();
    expect(
      ignoreEntryEdit(
        '{ "ignore": [{ "rule": "*", "path": "x.mdp.json", "reason": "r" }] }',
        'probability-sum',
        'x.mdp.json',
      ),
    ).toBeUndefined();
  });

  it('inserts an indented comment line above the finding', () => {
    const offset = leaky.indexOf('{\n      "from"');
    const { edit, reasonPosition } = ignoreCommentEdit(leaky, offset, 'probability-sum');
    const text = leaky.slice(0, edit.start) + edit.newText + leaky.slice(edit.end);
    const line = text.split('\n')[reasonPosition.line];
    expect(line).toBe('    // episcope-ignore probability-sum: ');
    expect(reasonPosition.character).toBe(line.length);
  });
});

describe('settings over the config file', () => {
  it('keeps well-typed settings only and lets set ones override the config file', () => {
    const settings = readSettings({
      rules: { 'reward-loop': 'off', x: 'loud' },
      seed: 7,
      stateCap: -1,
      executeModelCode: 'yes',
    });
    expect(settings.rules).toEqual({ 'reward-loop': 'off' });
    expect(settings.stateCap).toBeNull();
    expect(settings.executeModelCode).toBe(true);
    const merged = mergeSettings(resolveConfig({ rules: { 'reward-scale': 'off' }, seed: 3, rollouts: 100 }), settings);
    expect(merged.rules).toEqual({ 'reward-scale': 'off', 'reward-loop': 'off' });
    expect(merged.seed).toBe(7);
    expect(merged.rollouts).toBe(100);
  });
});

describe('warm start through the scheduler', () => {
  /** A pool that runs the worker's pipeline in-process and records the jobs it was given. */
  function inProcessPool(jobs: JobInput[]): WorkerPool {
    const pool = {
      run(job: JobInput): JobHandle {
        jobs.push(job);
        const report = analyzeJsonText(job.path, job.text, {
          analysis: true,
          startFrom: job.startFrom,
          keepSolution: true,
        });
        const snapshot = buildSnapshot({ uri: job.uri, version: job.version, report, durationMs: 1 });
        snapshot.solution = report.analysis?.solution;
        return { promise: Promise.resolve(snapshot), cancel: () => undefined };
      },
    };
    return pool as unknown as WorkerPool;
  }

  it('hands each analysis the last solution of the same document only, and the values match a cold start', async () => {
    const jobs: JobInput[] = [];
    const texts = new Map<string, string>();
    const snapshots: AnalysisSnapshot[] = [];
    const scheduler = new AnalysisScheduler(inProcessPool(jobs), {
      prepare: async (uri) => ({
        uri,
        version: jobs.length + 1,
        path: `${uri}.mdp.json`,
        text: texts.get(uri)!,
        settings: DEFAULT_SETTINGS,
        openConfigTexts: {},
        exec: false,
      }),
      started: () => () => undefined,
      completed: (snapshot) => snapshots.push(snapshot),
      failed: () => undefined,
    });
    const text = warehouseSpecText(300);
    texts.set('a', text);
    texts.set('b', text.replace('"discount": 0.95', '"discount": 0.9'));
    scheduler.schedule('a', true);
    await scheduler.current('a');
    scheduler.schedule('b', true);
    await scheduler.current('b');
    texts.set('a', text.replace('"reward":-1}', '"reward":-4}'));
    scheduler.schedule('a', true);
    const warm = await scheduler.current('a');
    expect(jobs.map((j) => j.startFrom !== undefined)).toEqual([false, false, true]);
    // The solution handed on is the one of document a's first analysis, not b's.
    expect(jobs[2].startFrom!.discount).toBe(0.95);
    // The scheduler keeps the solution; the snapshots that serve hovers no longer carry it.
    expect(snapshots.every((s) => s.solution === undefined)).toBe(true);
    const cold = buildSnapshot({
      uri: 'a',
      version: 3,
      report: analyzeJsonText('a.mdp.json', texts.get('a')!, { analysis: true }),
      durationMs: 1,
    });
    expect(warm!.diagnostics).toEqual(cold.diagnostics);
    expect(warm!.lens).toEqual(cold.lens);
    const [w, c] = [warm!.values!, cold.values!];
    for (let s = 0; s < c.stateCount; s++) {
      expect(Math.abs(w.optimalLower[s] - c.optimalLower[s])).toBeLessThanOrEqual(
        2e-6 * Math.max(1, Math.abs(c.optimalLower[s]) / 1000),
      );
      expect(Math.abs(w.randomUpper[s] - c.randomUpper[s])).toBeLessThanOrEqual(
        2e-6 * Math.max(1, Math.abs(c.randomUpper[s]) / 1000),
      );
    }
    scheduler.forget('a');
    scheduler.dispose();
  });
});
