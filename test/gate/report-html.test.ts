import { existsSync, mkdirSync, writeFileSync } from 'node:fs';
import * as path from 'node:path';
import { chromium, type Browser } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { cli, REPO_ROOT, tempFolder } from '../cli/cli-harness';
import type { JsonFile } from '../../server/src/cli/json-output';
import type { JsonRollouts } from '../../server/src/cli/json-output';
import {
  SAFETY_CAUTION,
  histogramTicks,
  htmlReport,
  niceTicks,
  stateName,
  type ReportFile,
} from '../../server/src/cli/report-html';

export const CHROMIUM = process.env.EPISCOPE_E2E_CHROMIUM ?? '/usr/bin/chromium';
/**
 * The README's set-up installs no browser, so without one the browser checks are skipped and say
 * why. The editor tier (test/e2e/vitest.config.ts, after scripts/e2e-install.sh) sets
 * EPISCOPE_BROWSER_REQUIRED=1 and runs this file too: there a missing browser fails.
 */
const BROWSER_PRESENT = existsSync(CHROMIUM) || process.env.EPISCOPE_BROWSER_REQUIRED === '1';
const BROWSER_SKIP_REASON = `skipped: no browser at ${CHROMIUM}; the editor tier (npm run test:e2e) runs these`;
if (!BROWSER_PRESENT) console.warn(`HTML report in headless Chromium: ${BROWSER_SKIP_REASON}`);
export const CHROMIUM_ARGS = [
  '--no-sandbox',
  '--disable-gpu',
  '--disable-background-networking',
  '--disable-component-update',
  '--disable-sync',
  '--no-first-run',
];
export const SCREENSHOT_DIR = path.resolve(__dirname, '..', '..', 'test-results');

/** A histogram of the given values in `bins` equal-width bins (the data is ours, invented for the test). */
function histogram(values: number[], bins: number): { lower: number; upper: number; counts: number[] } {
  const lower = Math.min(...values);
  const upper = Math.max(...values);
  const counts = new Array<number>(bins).fill(0);
  for (const v of values) counts[Math.min(bins - 1, Math.floor(((v - lower) / (upper - lower)) * bins))]++;
  return { lower, upper, counts };
}

/** Rollout figures of invented episodes, in the JSON output's shape. */
function rollouts(episodeReturns: number[], episodeLengths: number[]): JsonRollouts {
  const sorted = (xs: number[]) => [...xs].sort((a, b) => a - b);
  const at = (xs: number[], p: number) => sorted(xs)[Math.floor(p * (xs.length - 1))];
  const pct = (xs: number[]) => ({
    p5: at(xs, 0.05),
    p25: at(xs, 0.25),
    p50: at(xs, 0.5),
    p75: at(xs, 0.75),
    p95: at(xs, 0.95),
  });
  const mean = (xs: number[]) => xs.reduce((a, b) => a + b, 0) / xs.length;
  return {
    episodes: episodeReturns.length,
    seed: 1,
    stepCap: 1000,
    return: {
      mean: mean(episodeReturns),
      standardError: 0.15,
      ci95: { lower: mean(episodeReturns) - 0.3, upper: mean(episodeReturns) + 0.3 },
      min: Math.min(...episodeReturns),
      max: Math.max(...episodeReturns),
      percentiles: pct(episodeReturns),
      histogram: histogram(episodeReturns, 20),
    },
    length: {
      mean: mean(episodeLengths),
      min: Math.min(...episodeLengths),
      max: Math.max(...episodeLengths),
      percentiles: pct(episodeLengths),
      histogram: histogram(episodeLengths, 15),
    },
    reach: { goal: 0.4, failure: 0.5, neutral: 0.1, none: 0 },
    stepCapped: 0,
  };
}

// An invented warehouse-robot scenario: five states, one loop finding, and rollouts of both policies.
const interval = (lower: number, upper = lower) => ({ lower, upper });
const returns = Array.from({ length: 400 }, (_, i) => 6 + 4 * Math.sin(i * 0.37) + (i % 7) * 0.3);
const lengths = Array.from({ length: 400 }, (_, i) => 3 + (i % 11) + (i % 3));
const spec: ReportFile = {
  path: 'examples/shelf-robot.mdp.json',
  findings: [
    {
      rule: 'reward-loop',
      severity: 'warning',
      message: 'the loop aisle -> dock -> aisle earns 48.1; the goal earns 7.2',
      line: 12,
      column: 5,
      endLine: 12,
      endColumn: 30,
      trace: [],
    },
  ],
  analysis: {
    states: 5,
    transitions: 7,
    exact: true,
    start: {
      optimal: interval(8.41, 8.43),
      worst: interval(-12.5),
      random: interval(1.75, 1.76),
      reach: {
        optimal: { goal: 0.8, failure: 0.15, neutral: 0, none: 0.05 },
        random: { goal: 0.35, failure: 0.5, neutral: 0.1, none: 0.05 },
      },
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
  rollouts: { random: rollouts(returns, lengths) },
};
const broken: JsonFile = {
  path: 'examples/typo.mdp.json',
  findings: [
    {
      rule: 'schema',
      severity: 'error',
      message: 'discount must be a number',
      line: 3,
      column: 15,
      endLine: 3,
      endColumn: 20,
      trace: [],
    },
  ],
  notAnalysed: 'the spec has schema errors',
};
const html = htmlReport(
  { files: [spec, broken] },
  { toolName: 'episcope', toolVersion: '0.1.0', generatedAt: new Date('2026-01-02T03:04:05Z') },
);

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

  it('labels histograms at round values inside their range, whole numbers for steps', () => {
    expect(histogramTicks(-3.7, 12.2, false)).toEqual([0, 5, 10]);
    expect(histogramTicks(3, 17, true)).toEqual([5, 10, 15]);
    expect(histogramTicks(1, 2.4, true)).toEqual([1, 2]);
    expect(histogramTicks(3.01, 3.02, false)).toEqual([3.01, 3.015, 3.02]);
    // Too narrow for two whole numbers: the ends.
    expect(histogramTicks(4, 4.6, true)).toEqual([4, 4.6]);
    // The return histogram of the invented rollouts (about 2 to 11.8) is labelled 4, 6, 8, 10 rather than at its ends.
    const returnHistogram = html.slice(html.indexOf('Return per episode'), html.indexOf('Episode length'));
    const ticks = [...returnHistogram.matchAll(/class="tick">([^<]+)</g)].map((m) => m[1]);
    expect(ticks).toEqual(expect.arrayContaining(['4', '6', '8', '10']));
  });

  it('names object states by their fields, shortened, and keeps labels and plain ids', () => {
    expect(stateName('{"stock":4,"weekday":0}')).toBe('stock=4 weekday=0');
    expect(stateName('{"at":"dock","cargo":[1,2],"lit":true}')).toBe('at=dock cargo=[1,2] lit=true');
    expect(stateName('[3,"up"]')).toBe('[3, up]');
    expect(stateName('"idle"', 'idle')).toBe('idle');
    expect(stateName('roof')).toBe('roof');
    expect(stateName('{not json')).toBe('{not json');
    const long = stateName(JSON.stringify(Object.fromEntries(Array.from({ length: 12 }, (_, i) => [`field${i}`, i]))));
    expect(long).toHaveLength(48);
    expect(long.startsWith('field0=0 field1=1 ')).toBe(true);
    expect(long.endsWith('…')).toBe(true);
    const objectStates: ReportFile = {
      ...spec,
      analysis: { ...spec.analysis!, values: { '{"stock":4,"weekday":0}': spec.analysis!.values!.aisle } },
    };
    const page = htmlReport(
      { files: [objectStates] },
      { toolName: 'episcope', toolVersion: '0', generatedAt: new Date(0) },
    );
    expect(page).toContain('<td title="{&quot;stock&quot;:4,&quot;weekday&quot;:0}">stock=4 weekday=0</td>');
    expect(page).not.toContain('>{&quot;stock');
  });

  it('counts the states beyond the plotted and listed ones', () => {
    const page = htmlReport(
      { files: [spec] },
      { toolName: 'episcope', toolVersion: '0', generatedAt: new Date(0), maxPlottedStates: 2, maxTableStates: 3 },
    );
    expect(page).toContain('The plot shows 2 of 5 states (reachable ones first); 3 more are not plotted.');
    expect(page).toContain('<summary>Values of 3 of 5 states</summary>');
    expect(page).toContain('2 more rows not shown');
    expect(html).toContain('<summary>Values of 5 states</summary>');
    expect(html).not.toContain('not shown');
  });

  it('shows how episodes of a sampled model ended, from its rollouts', () => {
    const sampled: ReportFile = {
      path: 'examples/courier.mdp.ts',
      findings: [],
      rollouts: spec.rollouts,
      notAnalysed: 'a sampled model: estimates only',
    };
    const page = htmlReport({ files: [sampled] }, { toolName: 'episcope', toolVersion: '0', generatedAt: new Date(0) });
    const figure = page.slice(page.indexOf('<figure class="plot-rollout-reach">'));
    expect(figure).toContain('How episodes ended');
    // The invented rollouts end in a goal 40%, a failure 50% and neutrally 10% of the time.
    expect(figure).toContain('random: goal 0.4');
    expect(figure).toContain('random: failure 0.5');
    expect(figure).toContain('random: neutral 0.1');
    expect(figure).toContain('Estimated from 400 random-policy episodes');
    // An exact model has its exact bars; the estimate is not repeated.
    expect(html).not.toContain('plot-rollout-reach');
  });
});

describe.skipIf(!BROWSER_PRESENT)(
  `HTML report in headless Chromium${BROWSER_PRESENT ? '' : ` (${BROWSER_SKIP_REASON})`}`,
  () => {
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
        page.$$eval(selector, (elements) =>
          elements.map((e) => {
            const box = e.getBoundingClientRect();
            return [Math.round(box.width), Math.round(box.height)];
          }),
        );
      for (const plot of [
        '.plot-returns svg',
        '.plot-reach svg',
        '.plot-values svg',
        '.plot-return-histogram svg',
        '.plot-length-histogram svg',
      ]) {
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
      const xs = await page.$$eval('.plot-returns rect.range', (rects) =>
        rects.map((r) => r.getBoundingClientRect().x),
      );
      expect(xs[0]).toBeGreaterThan(xs[1]);
      expect(xs[1]).toBeGreaterThan(xs[2]);
      // Reach bars: optimal has goal, failure and none (3 segments); random all four.
      expect(await sizes('.plot-reach rect.reach')).toHaveLength(7);
      const goalWidths = await page.$$eval('.plot-reach rect.reach', (rects) =>
        rects.map((r) => r.getBoundingClientRect().width),
      );
      expect(goalWidths[0] / goalWidths[3]).toBeCloseTo(0.8 / 0.35, 1);
      // One marker per state and policy.
      expect(await sizes('.plot-values circle.state-value')).toHaveLength(15);
      expect(await sizes('.plot-values path.infinite')).toHaveLength(1);
      // Histogram bars: one per bin, the tallest where the count is largest.
      const bins = await page.$$eval('.plot-return-histogram rect.bin', (rects) =>
        rects.map((r) => r.getBoundingClientRect().height),
      );
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

    it('the report of a real run over the examples renders its plots, rollout histograms included', async () => {
      const out = path.join(tempFolder('report'), 'report.html');
      const run = await cli(['check', 'examples', '--report', out, '--rollouts', '300', '--fail-on', 'never'], {
        cwd: REPO_ROOT,
      });
      expect(run.stderr).toBe('');
      expect(run.code).toBe(0);
      const page = await browser.newPage({ viewport: { width: 1000, height: 900 } });
      const requests: string[] = [];
      page.on('request', (request) => requests.push(request.url()));
      await page.goto(`file://${out}`);
      const specs = await page.$$eval('section.spec', (sections) => sections.length);
      expect(specs).toBeGreaterThanOrEqual(6);
      const sized = (selector: string) =>
        page.$$eval(
          selector,
          (elements) =>
            elements.filter((e) => e.getBoundingClientRect().width > 100 && e.getBoundingClientRect().height > 50)
              .length,
        );
      const analysed = await page.$$eval('.plot-returns', (figures) => figures.length);
      expect(analysed).toBeGreaterThanOrEqual(4);
      expect(await sized('.plot-returns svg')).toBe(analysed);
      expect(await sized('.plot-reach svg')).toBe(analysed);
      expect(await sized('.plot-values svg')).toBe(analysed);
      // --rollouts 300 gives both policies' histograms for every exactly analysed spec, and the sampled model has its own.
      expect(await sized('.plot-return-histogram svg')).toBeGreaterThanOrEqual(2 * analysed);
      expect(await sized('.plot-length-histogram svg')).toBeGreaterThanOrEqual(2 * analysed);
      expect(
        await page.$$eval('.plot-return-histogram rect.bin', (bins) =>
          bins.some((b) => b.getBoundingClientRect().height > 5),
        ),
      ).toBe(true);
      expect(requests).toEqual([`file://${out}`]);
      mkdirSync(SCREENSHOT_DIR, { recursive: true });
      writeFileSync(path.join(SCREENSHOT_DIR, 'gate-report-examples.png'), await page.screenshot({ fullPage: true }));
      await page.close();
    });
  },
);
