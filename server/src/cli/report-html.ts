/**
 * `--report FILE.html`: one self-contained HTML page per run. Everything is inline (CSS and SVG
 * plots drawn here); a Content-Security-Policy forbids every network request, so the page opens
 * the same offline, from a CI artifact or a mail attachment. No script.
 *
 * Per spec: the start's return ranges (optimal, random, worst), how episodes end under the optimal
 * and the random policy, the value of every state, and, when rollouts ran, the histograms of the
 * returns and of the episode lengths.
 */
import { severityCount, type Severity } from '../rules/types';
import type { JsonFile, JsonInterval, JsonReach, JsonRollouts } from './json-output';
import { parseJsonNumber, textInterval, textProbability } from './numbers';
import { learningLines } from './text-output';

/** A file of the JSON output; the report reads its analysis (with values) and rollouts. */
export type ReportFile = JsonFile;

type ReportHistogram = JsonRollouts['return']['histogram'];

export interface ReportOptions {
  toolName: string;
  toolVersion: string;
  /** When the run happened (shown in the header); fixed in tests. */
  generatedAt: Date;
  /** Most states drawn in the per-state value plot (the table lists more). */
  maxPlottedStates?: number;
  /** Most states listed in the value table. */
  maxTableStates?: number;
}

export const SAFETY_CAUTION =
  'Passing checks says a spec is well-posed, not that a trained policy is safe. For physical systems ' +
  '(robots, vehicles, plant control) follow the applicable safety standards, local codes and licensed ' +
  'engineering practice, and test policies in simulation and under supervision before deployment.';

const COLORS = {
  optimal: '#1b6ca8',
  random: '#d9822b',
  learned: '#6c3483',
  worst: '#8a8a8a',
  goal: '#2e8540',
  failure: '#c0392b',
  neutral: '#7f8c8d',
  none: '#d5d8dc',
  axis: '#555',
  grid: '#e5e5e5',
};

/** The whole page. Pure: the same input gives the same text. */
export function htmlReport(output: { files: ReportFile[] }, options: ReportOptions): string {
  const counts: Record<Severity, number> = { error: 0, warning: 0, info: 0 };
  for (const file of output.files) for (const f of file.findings) counts[f.severity]++;
  const title = `${options.toolName} report`;
  const sections = output.files.map((file, i) => fileSection(file, i, options));
  const toc = output.files
    .map((file, i) => `<li><a href="#spec-${i}">${esc(file.path)}</a> ${badges(file)}</li>`)
    .join('');
  return `<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'; img-src data:">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>${esc(title)}</title>
<style>${STYLE}</style>
</head>
<body>
<header>
<h1>${esc(title)}</h1>
<p class="meta">${esc(options.toolName)} ${esc(options.toolVersion)} · ${esc(
    options.generatedAt
      .toISOString()
      .replace('T', ' ')
      .replace(/\.\d+Z$/, ' UTC'),
  )} · ${output.files.length} file${output.files.length === 1 ? '' : 's'} · <span class="sev-error">${counts.error} error${counts.error === 1 ? '' : 's'}</span>, <span class="sev-warning">${counts.warning} warning${counts.warning === 1 ? '' : 's'}</span>, <span class="sev-info">${counts.info} info</span></p>
<p class="caution" role="note"><strong>Safety.</strong> ${esc(SAFETY_CAUTION)}</p>
<nav><ol>${toc}</ol></nav>
</header>
<main>
${sections.join('\n')}
</main>
<footer><p>Values are sound bounds: the true value lies in each printed range. Rollout figures are Monte Carlo estimates.</p></footer>
</body>
</html>
`;
}

function badges(file: JsonFile): string {
  const n = (s: Severity) => file.findings.filter((f) => f.severity === s).length;
  return (['error', 'warning', 'info'] as const)
    .filter((s) => n(s) > 0)
    .map((s) => `<span class="badge sev-${s}">${severityCount(n(s), s)}</span>`)
    .join(' ');
}

function fileSection(file: ReportFile, index: number, options: ReportOptions): string {
  const parts: string[] = [`<section id="spec-${index}" class="spec">`, `<h2>${esc(file.path)}</h2>`];
  const a = file.analysis;
  if (a) {
    const facts = [
      `${a.states} states`,
      `${a.transitions} state-action pairs`,
      a.objective ?? 'maximize',
      `discount ${a.discount}`,
    ];
    if (a.horizon !== undefined) facts.push(`horizon ${a.horizon}`);
    facts.push(a.exact ? 'exact values' : `bounds at most ${Number(a.precision).toPrecision(2)} wide`);
    parts.push(`<p class="meta">${esc(facts.join(' · '))}</p>`);
  } else {
    parts.push(`<p class="meta">Not analysed${file.notAnalysed ? `: ${esc(file.notAnalysed)}` : ''}.</p>`);
  }
  parts.push(findingList(file));
  if (a) {
    const s = a.start;
    parts.push('<div class="plots">');
    parts.push(
      figure(
        'Return from the start',
        returnRangePlot([
          { label: 'optimal', interval: s.optimal, color: COLORS.optimal },
          { label: 'random', interval: s.random, color: COLORS.random },
          { label: 'worst', interval: s.worst, color: COLORS.worst },
        ]),
        'plot-returns',
      ),
    );
    parts.push(
      figure(
        'How episodes end',
        reachPlot([
          { label: 'optimal', reach: s.reach.optimal },
          { label: 'random', reach: s.reach.random },
        ]) +
          undeterminedReachNote([s.reach.optimal, s.reach.random]) +
          `<p class="note">Best achievable goal probability: ${textProbability(s.maxGoalReach ?? s.reach.optimal.goal)}</p>`,
        'plot-reach',
      ),
    );
    parts.push('</div>');
    if (a.values) parts.push(valuesSection(a.values, options));
  }
  if (file.rollouts) parts.push(rolloutSection(file.rollouts, !a));
  parts.push('</section>');
  return parts.join('\n');
}

function findingList(file: JsonFile): string {
  if (file.findings.length === 0) return '<p class="clean">No findings.</p>';
  const items = file.findings.map(
    (f) =>
      `<li><span class="badge sev-${f.severity}">${f.severity}</span> <code>${esc(f.rule)}</code> <span class="where">${f.line}:${f.column}</span> ${esc(f.message)}</li>`,
  );
  return `<ul class="findings">${items.join('')}</ul>`;
}

function figure(caption: string, body: string, cls: string): string {
  return `<figure class="${cls}"><figcaption>${esc(caption)}</figcaption>${body}</figure>`;
}

// ---------------------------------------------------------------------------------------------
// Plots

interface Scale {
  (x: number): number;
  ticks: number[];
  lo: number;
  hi: number;
}

/** A linear scale over [lo, hi] (widened to nice tick values) onto [x0, x1]. */
function linearScale(values: number[], x0: number, x1: number, includeZero = true): Scale {
  const finite = values.filter(Number.isFinite);
  if (includeZero) finite.push(0);
  let lo = finite.length > 0 ? Math.min(...finite) : 0;
  let hi = finite.length > 0 ? Math.max(...finite) : 1;
  if (hi - lo < 1e-12) {
    const pad = Math.max(1, Math.abs(hi) * 0.1);
    lo -= pad;
    hi += pad;
  }
  const ticks = niceTicks(lo, hi, 5);
  lo = Math.min(lo, ticks[0]);
  hi = Math.max(hi, ticks[ticks.length - 1]);
  const f = ((x: number) => x0 + ((Math.max(lo, Math.min(hi, x)) - lo) / (hi - lo)) * (x1 - x0)) as Scale;
  f.ticks = ticks;
  f.lo = lo;
  f.hi = hi;
  return f;
}

/** Tick values at 1, 2 or 5 times a power of ten, covering [lo, hi] (common practice for axes). */
export function niceTicks(lo: number, hi: number, count: number): number[] {
  const raw = (hi - lo) / Math.max(1, count);
  const power = 10 ** Math.floor(Math.log10(raw));
  const step = [1, 2, 5, 10].map((m) => m * power).find((s) => s >= raw) ?? 10 * power;
  const first = Math.floor(lo / step) * step;
  const ticks: number[] = [];
  for (let t = first; t <= hi + step * 1e-9; t += step) ticks.push(Number(t.toPrecision(12)));
  if (ticks[ticks.length - 1] < hi) ticks.push(Number((ticks[ticks.length - 1] + step).toPrecision(12)));
  return ticks;
}

function axis(scale: Scale, y: number, top: number): string {
  const parts = [`<line x1="${scale(scale.lo)}" y1="${y}" x2="${scale(scale.hi)}" y2="${y}" stroke="${COLORS.axis}"/>`];
  for (const t of scale.ticks) {
    const x = r(scale(t));
    parts.push(`<line x1="${x}" y1="${top}" x2="${x}" y2="${y}" stroke="${COLORS.grid}"/>`);
    parts.push(`<line x1="${x}" y1="${y}" x2="${x}" y2="${y + 4}" stroke="${COLORS.axis}"/>`);
    parts.push(`<text x="${x}" y="${y + 16}" text-anchor="middle" class="tick">${esc(short(t))}</text>`);
  }
  return parts.join('');
}

/** Horizontal interval bars, one per policy, on a shared axis; infinite ends become arrows. */
function returnRangePlot(rows: Array<{ label: string; interval: JsonInterval; color: string }>): string {
  const width = 460;
  const rowHeight = 30;
  const left = 70;
  const right = width - 20;
  const top = 10;
  const height = top + rows.length * rowHeight + 30;
  const bounds = rows.flatMap((row) => [parseJsonNumber(row.interval.lower), parseJsonNumber(row.interval.upper)]);
  const scale = linearScale(bounds, left, right);
  const parts = [axis(scale, top + rows.length * rowHeight, top)];
  rows.forEach((row, i) => {
    const lower = parseJsonNumber(row.interval.lower);
    const upper = parseJsonNumber(row.interval.upper);
    const y = top + i * rowHeight + rowHeight / 2;
    const x0 = r(scale(lower));
    const x1 = r(scale(upper));
    parts.push(`<text x="${left - 8}" y="${y + 4}" text-anchor="end" class="label">${esc(row.label)}</text>`);
    parts.push(
      `<rect class="range" x="${x0}" y="${y - 7}" width="${Math.max(3, x1 - x0)}" height="14" rx="2" fill="${row.color}" opacity="0.85"><title>${esc(`${row.label}: ${textInterval(lower, upper)}`)}</title></rect>`,
    );
    if (lower === -Infinity) parts.push(arrow(x0, y, -1, row.color));
    if (upper === Infinity) parts.push(arrow(x1, y, 1, row.color));
    const labelX = Math.min(right - 2, x1 + 6);
    const anchor = x1 + 6 > right - 60 ? 'end' : 'start';
    const labelY = anchor === 'end' ? y - 10 : y + 4;
    parts.push(
      `<text x="${anchor === 'end' ? labelX : x1 + 6}" y="${labelY}" text-anchor="${anchor}" class="value">${esc(textInterval(lower, upper))}</text>`,
    );
  });
  return svg(width, height, 'Return ranges from the start under the optimal, random and worst policy', parts.join(''));
}

/** A triangle pointing off the axis: the bound is infinite. */
function arrow(x: number, y: number, direction: 1 | -1, color: string, half = 7): string {
  const tip = x + direction * (half + 1);
  return `<path class="infinite" d="M${x} ${y - half} L${tip} ${y} L${x} ${y + half} Z" fill="${color}"/>`;
}

const REACH_KINDS: Array<{ key: keyof JsonReach; label: string; color: string }> = [
  { key: 'goal', label: 'goal', color: COLORS.goal },
  { key: 'failure', label: 'failure', color: COLORS.failure },
  { key: 'neutral', label: 'neutral', color: COLORS.neutral },
  { key: 'none', label: 'never ends / cut', color: COLORS.none },
];

/** Says which bars are missing because their probability was not determined to the precision. */
function undeterminedReachNote(reaches: JsonReach[]): string {
  const missing = REACH_KINDS.filter((kind) => reaches.some((reach) => reach[kind.key] === 'undetermined')).map(
    (kind) => kind.label,
  );
  return missing.length === 0
    ? ''
    : `<p class="note">Undetermined (the solve stopped before the precision), so not drawn: ${esc(missing.join(', '))}</p>`;
}

/** Stacked bars: the probability of ending in each terminal kind, per policy. */
function reachPlot(rows: Array<{ label: string; reach: JsonReach }>): string {
  const width = 460;
  const left = 70;
  const right = width - 20;
  const rowHeight = 30;
  const top = 10;
  const legendY = top + rows.length * rowHeight + 30;
  const height = legendY + 14;
  const x = (p: number) => left + p * (right - left);
  const parts: string[] = [];
  for (const t of [0, 0.25, 0.5, 0.75, 1]) {
    parts.push(
      `<line x1="${r(x(t))}" y1="${top}" x2="${r(x(t))}" y2="${top + rows.length * rowHeight}" stroke="${COLORS.grid}"/>`,
    );
    parts.push(
      `<text x="${r(x(t))}" y="${top + rows.length * rowHeight + 14}" text-anchor="middle" class="tick">${t * 100}%</text>`,
    );
  }
  rows.forEach((row, i) => {
    const y = top + i * rowHeight + 8;
    parts.push(`<text x="${left - 8}" y="${y + 11}" text-anchor="end" class="label">${esc(row.label)}</text>`);
    let cumulative = 0;
    for (const kind of REACH_KINDS) {
      const value = row.reach[kind.key] ?? 0;
      // An undetermined probability gets no bar; the note under the plot says so.
      if (typeof value !== 'number') continue;
      const p = Math.max(0, value);
      if (p <= 0) continue;
      const x0 = x(cumulative);
      const w = Math.max(1, x(Math.min(1, cumulative + p)) - x0);
      parts.push(
        `<rect class="reach" x="${r(x0)}" y="${y}" width="${r(w)}" height="16" fill="${kind.color}"><title>${esc(`${row.label}: ${kind.label} ${textProbability(p)}`)}</title></rect>`,
      );
      if (w > 34)
        parts.push(
          `<text x="${r(x0 + w / 2)}" y="${y + 12}" text-anchor="middle" class="inbar">${esc(percent(p))}</text>`,
        );
      cumulative += p;
    }
  });
  let lx = left;
  for (const kind of REACH_KINDS) {
    parts.push(
      `<rect x="${lx}" y="${legendY - 9}" width="10" height="10" fill="${kind.color}"/><text x="${lx + 14}" y="${legendY}" class="tick">${esc(kind.label)}</text>`,
    );
    lx += 24 + kind.label.length * 6.5;
  }
  return svg(
    width,
    height,
    'Probability of ending in each terminal kind under the optimal and the random policy',
    parts.join(''),
  );
}

type StateValues = NonNullable<NonNullable<JsonFile['analysis']>['values']>;

function valuesSection(values: StateValues, options: ReportOptions): string {
  const maxPlotted = options.maxPlottedStates ?? 40;
  const maxTable = options.maxTableStates ?? 500;
  const ids = Object.keys(values);
  // Reachable states first: they are the ones a policy can see.
  const ordered = [
    ...ids.filter((id) => values[id].reachable !== false),
    ...ids.filter((id) => values[id].reachable === false),
  ];
  const plotted = ordered.slice(0, maxPlotted);
  const listed = Math.min(maxTable, ordered.length);
  const note =
    ordered.length > plotted.length
      ? `<p class="note">The plot shows ${plotted.length} of ${ordered.length} states (reachable ones first); ${ordered.length - plotted.length} more are not plotted.</p>`
      : '';
  const rows = ordered.slice(0, maxTable).map((id) => {
    const v = values[id];
    const name = stateName(id, v.label);
    const kind = v.terminal ? ` <span class="terminal">${esc(v.terminal)}</span>` : '';
    const unreachable = v.reachable === false ? ' <span class="note">unreachable</span>' : '';
    const raw = name === id ? '' : ` title="${esc(id)}"`;
    return `<tr><td${raw}>${esc(name)}${kind}${unreachable}</td><td>${esc(interval(v.optimal))}</td><td>${esc(interval(v.random))}</td><td>${esc(interval(v.worst))}</td><td>${esc(v.best.join(', '))}</td></tr>`;
  });
  if (ordered.length > listed)
    rows.push(
      `<tr><td colspan="5" class="note">${ordered.length - listed} more row${ordered.length - listed === 1 ? '' : 's'} not shown</td></tr>`,
    );
  const summary =
    ordered.length > listed
      ? `Values of ${listed} of ${ordered.length} states`
      : `Values of ${listed} state${listed === 1 ? '' : 's'}`;
  const table = `<details><summary>${summary}</summary><table class="values"><thead><tr><th>state</th><th>optimal</th><th>random</th><th>worst</th><th>best actions</th></tr></thead><tbody>${rows.join('')}</tbody></table></details>`;
  return figure(
    'Value of each state',
    statePlot(plotted.map((id) => ({ id: stateName(id, values[id].label), v: values[id] }))) + note + table,
    'plot-values',
  );
}

/**
 * How a state is named in the report: its label when it has one, else its id; the canonical JSON
 * key of an object state reads as its fields ("stock=4 weekday=0"), shortened to `max` characters.
 */
export function stateName(id: string, label?: string, max = 48): string {
  if (label !== undefined) return truncate(label, max);
  if (!id.startsWith('{') && !id.startsWith('[')) return truncate(id, max);
  let value: unknown;
  try {
    value = JSON.parse(id);
  } catch {
    return truncate(id, max);
  }
  const part = (v: unknown): string => (typeof v === 'string' ? v : JSON.stringify(v));
  const text = Array.isArray(value)
    ? `[${value.map(part).join(', ')}]`
    : Object.entries(value as Record<string, unknown>)
        .map(([key, v]) => `${key}=${part(v)}`)
        .join(' ');
  return truncate(text, max);
}

/** One row per state: the optimal, random and worst values as markers with their bounds. */
function statePlot(rows: Array<{ id: string; v: StateValues[string] }>): string {
  const width = 940;
  const rowHeight = 18;
  const labelWidth = Math.min(260, 20 + Math.max(40, ...rows.map((row) => row.id.length * 6.6)));
  const left = labelWidth;
  const right = width - 20;
  const top = 24;
  const height = top + rows.length * rowHeight + 28;
  const numbers = rows.flatMap(({ v }) =>
    [v.optimal, v.random, v.worst].flatMap((i) => [parseJsonNumber(i.lower), parseJsonNumber(i.upper)]),
  );
  const scale = linearScale(numbers, left, right);
  const parts = [axis(scale, top + rows.length * rowHeight, top)];
  const legend: Array<[string, string]> = [
    ['optimal', COLORS.optimal],
    ['random', COLORS.random],
    ['worst', COLORS.worst],
  ];
  legend.forEach(([label, color], i) => {
    const lx = left + i * 90;
    parts.push(
      `<circle cx="${lx + 5}" cy="10" r="4" fill="${color}"/><text x="${lx + 14}" y="14" class="tick">${label}</text>`,
    );
  });
  rows.forEach(({ id, v }, i) => {
    const y = top + i * rowHeight + rowHeight / 2;
    if (i % 2 === 0)
      parts.push(
        `<rect x="${left}" y="${y - rowHeight / 2}" width="${right - left}" height="${rowHeight}" fill="#f7f7f7"/>`,
      );
    parts.push(
      `<text x="${left - 8}" y="${y + 4}" text-anchor="end" class="label">${esc(truncate(id, Math.floor((labelWidth - 16) / 6.6)))}${v.terminal ? ' ◆' : ''}</text>`,
    );
    const marks: Array<[JsonInterval, string, string]> = [
      [v.worst, COLORS.worst, 'worst'],
      [v.random, COLORS.random, 'random'],
      [v.optimal, COLORS.optimal, 'optimal'],
    ];
    for (const [bounds, color, label] of marks) {
      const lower = parseJsonNumber(bounds.lower);
      const upper = parseJsonNumber(bounds.upper);
      const x0 = r(scale(lower));
      const x1 = r(scale(upper));
      if (x1 - x0 >= 2)
        parts.push(
          `<line x1="${x0}" y1="${y}" x2="${x1}" y2="${y}" stroke="${color}" stroke-width="3" opacity="0.6"/>`,
        );
      if (lower === -Infinity) parts.push(arrow(x0, y, -1, color, 4));
      if (upper === Infinity) parts.push(arrow(x1, y, 1, color, 4));
      const mid =
        Number.isFinite(lower) && Number.isFinite(upper) ? (lower + upper) / 2 : Number.isFinite(lower) ? lower : upper;
      parts.push(
        `<circle class="state-value" cx="${r(scale(mid))}" cy="${y}" r="4" fill="${color}"><title>${esc(`${id} ${label}: ${textInterval(lower, upper)}`)}</title></circle>`,
      );
    }
  });
  return svg(width, height, 'Optimal, random and worst value of each state', parts.join(''));
}

/** The rollouts' histograms; for a sampled model (no exact analysis) also how its episodes ended. */
function rolloutSection(rollouts: NonNullable<JsonFile['rollouts']>, sampledOnly: boolean): string {
  const entries = (['optimal', 'learned', 'random'] as const).flatMap((policy) =>
    rollouts[policy] ? [[policy, rollouts[policy]!] as const] : [],
  );
  if (entries.length === 0) return '';
  const parts = ['<h3>Rollouts</h3>', '<div class="plots">'];
  if (sampledOnly) {
    const episodes = entries.map(([policy, stats]) => `${stats.episodes} ${policy}-policy episodes`).join(' and ');
    parts.push(
      figure(
        'How episodes ended',
        reachPlot(entries.map(([policy, stats]) => ({ label: policy, reach: stats.reach }))) +
          `<p class="note">Estimated from ${esc(episodes)}; "never ends / cut" counts episodes stopped at the step cap or by the horizon.</p>`,
        'plot-rollout-reach',
      ),
    );
  }
  for (const [policy, stats] of entries) {
    const color = COLORS[policy];
    const ci = stats.return.ci95;
    const summary =
      `${stats.episodes} episodes, seed ${stats.seed}; mean return ${short(parseJsonNumber(stats.return.mean))} ` +
      `(95% interval ${short(parseJsonNumber(ci.lower))} to ${short(parseJsonNumber(ci.upper))}); ` +
      `mean length ${short(parseJsonNumber(stats.length.mean))} steps` +
      (stats.stepCapped > 0 ? `; ${stats.stepCapped} stopped at the ${stats.stepCap}-step cap` : '');
    parts.push(
      figure(
        `Return per episode, ${policy} policy`,
        histogramPlot(stats.return.histogram, 'return', color, false) + `<p class="note">${esc(summary)}</p>`,
        'plot-return-histogram',
      ),
    );
    parts.push(
      figure(
        `Episode length, ${policy} policy`,
        histogramPlot(stats.length.histogram, 'steps', color, true),
        'plot-length-histogram',
      ),
    );
  }
  parts.push('</div>');
  if (rollouts.learning) parts.push(`<p class="note">${learningLines(rollouts.learning).map(esc).join('<br>')}</p>`);
  return parts.join('\n');
}

/** Bars of equal-width bins from `lower` to `upper`. */
function histogramPlot(histogram: ReportHistogram, unit: string, color: string, integer: boolean): string {
  const width = 460;
  const height = 200;
  const left = 50;
  const right = width - 15;
  const top = 10;
  const bottom = height - 34;
  const counts = histogram.counts;
  const lower = parseJsonNumber(histogram.lower);
  const upper = parseJsonNumber(histogram.upper);
  const maxCount = Math.max(1, ...counts);
  const yScale = linearScale([0, maxCount], bottom, top, true);
  const parts: string[] = [];
  for (const t of yScale.ticks) {
    const y = r(yScale(t));
    parts.push(
      `<line x1="${left}" y1="${y}" x2="${right}" y2="${y}" stroke="${COLORS.grid}"/><text x="${left - 6}" y="${y + 4}" text-anchor="end" class="tick">${esc(short(t))}</text>`,
    );
  }
  const fmt = (x: number) => (integer ? String(Math.round(x)) : short(x));
  const span = upper - lower;
  if (!(span > 0)) {
    // Every episode gave the same value: one bar in the middle, labelled with that value.
    const total = counts.reduce((a, b) => a + b, 0);
    const y = yScale(total);
    const barWidth = (right - left) / 5;
    const x = (left + right) / 2 - barWidth / 2;
    parts.push(
      `<rect class="bin" x="${r(x)}" y="${r(y)}" width="${r(barWidth)}" height="${r(Math.max(0, bottom - y))}" fill="${color}"><title>${esc(`${fmt(lower)} ${unit}: ${total}`)}</title></rect>`,
    );
    parts.push(`<line x1="${left}" y1="${bottom}" x2="${right}" y2="${bottom}" stroke="${COLORS.axis}"/>`);
    parts.push(
      `<text x="${r(x + barWidth / 2)}" y="${bottom + 16}" text-anchor="middle" class="tick">${esc(`all ${fmt(lower)}`)}</text>`,
    );
  } else {
    const bins = Math.max(1, counts.length);
    const binWidth = (right - left) / bins;
    counts.forEach((count, i) => {
      const y = yScale(count);
      const from = lower + (span * i) / bins;
      const to = lower + (span * (i + 1)) / bins;
      parts.push(
        `<rect class="bin" x="${r(left + i * binWidth + 1)}" y="${r(y)}" width="${r(Math.max(1, binWidth - 2))}" height="${r(Math.max(0, bottom - y))}" fill="${color}"><title>${esc(`${short(from)} to ${short(to)} ${unit}: ${count}`)}</title></rect>`,
      );
    });
    parts.push(`<line x1="${left}" y1="${bottom}" x2="${right}" y2="${bottom}" stroke="${COLORS.axis}"/>`);
    for (const t of histogramTicks(lower, upper, integer)) {
      const x = r(left + ((t - lower) / span) * (right - left));
      parts.push(
        `<line x1="${x}" y1="${bottom}" x2="${x}" y2="${bottom + 4}" stroke="${COLORS.axis}"/><text x="${x}" y="${bottom + 16}" text-anchor="middle" class="tick">${esc(fmt(t))}</text>`,
      );
    }
  }
  parts.push(
    `<text x="${(left + right) / 2}" y="${bottom + 28}" text-anchor="middle" class="tick">${esc(unit)}</text>`,
  );
  return svg(width, height, `Histogram of ${unit}`, parts.join(''));
}

/**
 * Round tick values inside a histogram's range [lower, upper] (1, 2 or 5 times a power of ten;
 * whole numbers for counts of steps); the two ends when fewer than two round values fall inside.
 */
export function histogramTicks(lower: number, upper: number, integer: boolean): number[] {
  const inside = niceTicks(lower, upper, 5).filter(
    (t) =>
      t >= lower - 1e-9 * Math.abs(upper - lower) &&
      t <= upper + 1e-9 * Math.abs(upper - lower) &&
      (!integer || Number.isInteger(t)),
  );
  return inside.length >= 2 ? inside : [lower, upper];
}

function svg(width: number, height: number, title: string, body: string): string {
  return `<svg xmlns="http://www.w3.org/2000/svg" role="img" width="${width}" height="${r(height)}" viewBox="0 0 ${width} ${r(height)}"><title>${esc(title)}</title>${body}</svg>`;
}

// ---------------------------------------------------------------------------------------------

function interval(i: JsonInterval): string {
  return textInterval(parseJsonNumber(i.lower), parseJsonNumber(i.upper));
}

function percent(p: number): string {
  return `${Number((p * 100).toPrecision(3))}%`;
}

/** A number for axis labels: at most 4 significant digits. */
function short(x: number): string {
  if (!Number.isFinite(x)) return x > 0 ? '∞' : x < 0 ? '-∞' : '?';
  if (x !== 0 && (Math.abs(x) >= 1e6 || Math.abs(x) < 1e-3)) return x.toExponential(2);
  return String(Number(x.toPrecision(4)));
}

function truncate(text: string, max: number): string {
  return text.length > max ? `${text.slice(0, Math.max(1, max - 1))}…` : text;
}

function r(x: number): number {
  return Math.round(x * 10) / 10;
}

function esc(text: string): string {
  return text.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');
}

const STYLE = `
body{font:14px/1.45 system-ui,-apple-system,"Segoe UI",Roboto,"DejaVu Sans",sans-serif;color:#222;margin:0;background:#fff}
header,main,footer{max-width:980px;margin:0 auto;padding:0 16px}
h1{font-size:22px;margin:18px 0 4px}h2{font-size:17px;margin:0 0 2px;word-break:break-all}h3{font-size:15px;margin:14px 0 4px}
.meta{color:#555;margin:2px 0 8px}.note{color:#666;font-size:12px;margin:4px 0}
.caution{background:#fff8e1;border-left:4px solid #e0a800;padding:8px 12px;margin:10px 0}
.spec{border-top:1px solid #ddd;padding:14px 0}
.plots{display:flex;flex-wrap:wrap;gap:12px}.plots>figure{flex:0 1 466px;min-width:0}
figure{margin:8px 0;padding:0}figcaption{font-weight:600;margin-bottom:4px}
svg{display:block;max-width:100%;height:auto;font-size:11px}
svg .tick{fill:#555;font-size:10px}svg .label{fill:#222;font-size:11px}svg .value{fill:#222;font-size:11px}svg .inbar{fill:#fff;font-size:10px;font-weight:600}
.findings{list-style:none;padding:0;margin:6px 0}.findings li{margin:3px 0}.where{color:#777;font-family:ui-monospace,monospace;font-size:12px}
.badge{display:inline-block;border-radius:3px;padding:0 5px;font-size:11px;color:#fff}
.badge.sev-error{background:#c0392b}.badge.sev-warning{background:#d9822b}.badge.sev-info{background:#1b6ca8}
span.sev-error:not(.badge){color:#c0392b}span.sev-warning:not(.badge){color:#b8661a}span.sev-info:not(.badge){color:#1b6ca8}
.clean{color:#2e8540}.terminal{font-size:11px;color:#555;border:1px solid #bbb;border-radius:3px;padding:0 3px}
table.values{border-collapse:collapse;font-size:12px;margin-top:6px}table.values td,table.values th{border-bottom:1px solid #eee;padding:2px 8px;text-align:left}
code{font-family:ui-monospace,monospace;font-size:12px}
nav ol{margin:4px 0 10px;padding-left:20px}
`;
