import { mkdirSync, writeFileSync } from 'node:fs';
import * as path from 'node:path';
import { chromium, type Browser } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { JsonFile } from '../../server/src/cli/json-output';
import { SAFETY_CAUTION, htmlReport, niceTicks, type ReportFile, type ReportHistogram } from '../../server/src/cli/report-html';

export const CHROMIUM = '/usr/bin/chromium';
export const CHROMIUM_ARGS = ['--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update', '--disable-sync', '--no-first-run'];
export const SCREENSHOT_DIR = path.resolve(__dirname, '..', '..', 'test-results');

/** A histogram of the given values in `bins` equal-width bins (the data is ours, invented for the test). */
function histogram(values: number[], bins: number): ReportHistogram {
  const lower = Math.min(...values);
  const upper = Math.max(...values);
  const counts = new Array<number>(bins).fill(0);
  for (const v of values) counts[Math.min(bins - 1, Math.floor(((v - lower) / (upper - lower)) * bins))]++;
  return { lower, upper, counts };
}

// An invented warehouse-robot scenario: five states, one loop finding, and rollouts of both policies.
const interval = (lower: number, upper = lower) => ({ lower, upper });
const returns = Array.from({ length: 400 }, (_, i) => 6 + 4 * Math.sin(i * 0.37) + (i % 7) * 0.3);
const lengths = Array.from({ length: 400 }, (_, i) => 3 + (i % 11) + (i % 3));
const spec: ReportFile = {
  path: 'examples/shelf-robot.mdp.json',
  findings: [{ rule: 'reward-loop', severity: 'warning', message: 'the loop aisle -> dock -> aisle earns 48.1; the goal earns 7.2', line: 12, column: 5, endLine: 12, endColumn: 30, trace: [] }],
  analysis: {
    states: 5,
    transitions: 7,
    exact: true,
    start: {
      optimal: interval(8.41, 8.43),
      worst: interval(-12.5),
      random: interval(1.75, 1.76),
      reach: { optimal: { goal: 0.8, failure: 0.15, neutral: 0, none: 0.05 }, random: { goal: 0.35, failure: 0.5, neutral: 0.1, none: 0.05 } },
      maxGoalReach: 0.97,
      expectedLength: { optimal: 6, random: 14 },
    },
    outcomes: 11,
    objective: 'maximize',
    discount: 0.95,
    precision: 1e-7,
    terms: [],
    values: Object.fromEntries(
      ['aisle', 'dock', 'shelf', 'goal', 'crash'].map((id, i) => [
        id,
        {
          // Terminals are worth 0; the shelf's worst value is unbounded below (a penalty loop).
          optimal: i >= 3 ? interval(0) : interval(8 - i * 2, 8 - i * 2 + 0.01),
          random: i >= 3 ? interval(0) : interval(2 - i),
          worst: i >= 3 ? interval(0) : i === 2 ? { lower: '-inf' as const, upper: -20 } : interval(-12 + i),
          best: i < 3 ? ['forward'] : [],
          reachable: true,
          q: {},
          maxGoalReach: 1,
          ...(i >= 3 ? { terminal: i === 3 ? ('goal' as const) : ('failure' as const) } : {}),
        },
      ]),
    ),
  },
  rollouts: {
    random: { policy: 'random', episodes: 400, seed: 1, return: { mean: 6.9, ci95: { lower: 6.6, upper: 7.2 }, histogram: histogram(returns, 20) }, length: { mean: 9, histogram: histogram(lengths, 15) } },
  },
};
const broken: JsonFile = { path: 'examples/typo.mdp.json', findings: [{ rule: 'schema', severity: 'error', message: 'discount must be a number', line: 3, column: 15, endLine: 3, endColumn: 20, trace: [] }], notAnalysed: 'the spec has schema errors' };
const html = htmlReport({ files: [spec, broken] }, { toolName: 'episcope', toolVersion: '0.1.0', generatedAt: new Date('2026-01-02T03:04:05Z') });

describe('HTML report, as text', () => {
  it('is self-contained: no script, no external resource, a policy that forbids fetching', () => {
    expect(html).not.toMatch(/<script|<link|<iframe|<img|\ssrc=|@import|url\(/i);
    // The only URLs are SVG namespace names, which a browser never fetches.
    expect(html.match(/https?:\/\/[^\s"')<]+/g)?.every((u) => u === 'http://www.w3.org/2000/svg')).toBe(true);
    expect(html).toContain(`content="default-src 'none'; style-src 'unsafe-inline'; img-src data:"`);
  });

  it('repeats the safety caution and escapes text', () => {
    expect(html).toContain(SAFETY_CAUTION);
    expect(html).toContain('aisle -&gt; dock');
  });

  it('puts axis ticks at 1, 2 or 5 times a power of ten (common practice)', () => {
    expect(niceTicks(-12.5, 8.43, 5)).toEqual([-15, -10, -5, 0, 5, 10]);
    expect(niceTicks(0, 0.97, 5)).toEqual([0, 0.2, 0.4, 0.6, 0.8, 1]);
  });
});

describe('HTML report in headless Chromium', () => {
  let browser: Browser;
  beforeAll(async () => {
    browser = await chromium.launch({ executablePath: CHROMIUM, args: CHROMIUM_ARGS });
  });
  afterAll(async () => {
    await browser?.close();
  });

  it('renders every plot with non-zero size, makes no request, and is screenshotted', async () => {
    const page = await browser.newPage({ viewport: { width: 1000, height: 900 } });
    const requests: string[] = [];
    page.on('request', (request) => requests.push(request.url()));
    await page.setContent(html, { waitUntil: 'load' });

    const sizes = async (selector: string) =>
      page.$$eval(selector, (elements) => elements.map((e) => {
        const box = e.getBoundingClientRect();
        return [Math.round(box.width), Math.round(box.height)];
      }));
    for (const plot of ['.plot-returns svg', '.plot-reach svg', '.plot-values svg', '.plot-return-histogram svg', '.plot-length-histogram svg']) {
      const found = await sizes(plot);
      expect(found, plot).toHaveLength(1);
      expect(found[0][0], `${plot} width`).toBeGreaterThan(100);
      expect(found[0][1], `${plot} height`).toBeGreaterThan(50);
    }
    // Three return ranges (optimal, random, worst), each drawn with a visible width.
    const ranges = await sizes('.plot-returns rect.range');
    expect(ranges).toHaveLength(3);
    for (const [w, h] of ranges) expect(w > 0 && h > 0).toBe(true);
    // The optimal range lies right of the random one, which lies right of the worst one.
    const xs = await page.$$eval('.plot-returns rect.range', (rects) => rects.map((r) => r.getBoundingClientRect().x));
    expect(xs[0]).toBeGreaterThan(xs[1]);
    expect(xs[1]).toBeGreaterThan(xs[2]);
    // Reach bars: optimal has goal, failure and none (3 segments); random all four.
    expect(await sizes('.plot-reach rect.reach')).toHaveLength(7);
    const goalWidths = await page.$$eval('.plot-reach rect.reach', (rects) => rects.map((r) => r.getBoundingClientRect().width));
    expect(goalWidths[0] / goalWidths[3]).toBeCloseTo(0.8 / 0.35, 1);
    // One marker per state and policy.
    expect(await sizes('.plot-values circle.state-value')).toHaveLength(15);
    expect(await sizes('.plot-values path.infinite')).toHaveLength(1);
    // Histogram bars: one per bin, the tallest where the count is largest.
    const bins = await page.$$eval('.plot-return-histogram rect.bin', (rects) => rects.map((r) => r.getBoundingClientRect().height));
    const counts = spec.rollouts!.random!.return.histogram.counts;
    expect(bins).toHaveLength(20);
    expect(bins.indexOf(Math.max(...bins))).toBe(counts.indexOf(Math.max(...counts)));
    expect(await sizes('.plot-length-histogram rect.bin')).toHaveLength(15);
    expect(await page.textContent('.caution')).toContain('licensed engineering practice');

    expect(requests).toEqual([]);
    mkdirSync(SCREENSHOT_DIR, { recursive: true });
    const shot = path.join(SCREENSHOT_DIR, 'gate-report.png');
    writeFileSync(shot, await page.screenshot({ fullPage: true }));
    await page.close();
  });
});
