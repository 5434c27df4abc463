/**
 * The text output, for a person at a terminal: one line per finding in the `file:line:col` form
 * that editors and terminals turn into links, the trace state by state, then the start's return
 * ranges per file and a summary line.
 */
import type { JsonFile, JsonInterval, JsonLearning, JsonReach, JsonRollouts } from './json-output';
import { parseJsonNumber, textInterval, textProbability, type JsonNumber, type JsonProbability } from './numbers';
import { severityCount, type Severity } from '../rules/types';

export interface Style {
  severity(severity: Severity, text: string): string;
  path(text: string): string;
  dim(text: string): string;
}

export const PLAIN_STYLE: Style = {
  severity: (_severity, text) => text,
  path: (text) => text,
  dim: (text) => text,
};

const ANSI: Record<Severity, string> = { error: '\u001b[31m', warning: '\u001b[33m', info: '\u001b[36m' };
const RESET = '\u001b[0m';

export const COLOR_STYLE: Style = {
  severity: (severity, text) => `${ANSI[severity]}${text}${RESET}`,
  path: (text) => `\u001b[1m${text}${RESET}`,
  dim: (text) => `\u001b[2m${text}${RESET}`,
};

/**
 * Colour only for a terminal, and never when NO_COLOR is set to a non-empty value (the NO_COLOR
 * convention, no-color.org).
 */
export function chooseStyle(isTTY: boolean | undefined, env: Record<string, string | undefined>): Style {
  return isTTY && !env.NO_COLOR ? COLOR_STYLE : PLAIN_STYLE;
}

/** The findings and return ranges of one file, as lines of text (ending in a newline). */
export function formatFileText(file: JsonFile, style: Style): string {
  const lines: string[] = [];
  for (const f of file.findings) {
    lines.push(
      `${style.path(`${file.path}:${f.line}:${f.column}`)} ${style.severity(f.severity, f.severity)} ${f.rule} ${f.message}`,
    );
    if (f.trace.length > 0) {
      const width = Math.max(...f.trace.map((step) => step.state.length));
      for (const step of f.trace) {
        const action = step.action !== undefined ? `  --${step.action}-->` : '';
        lines.push(style.dim(`    ${step.state.padEnd(width)}${action}`.trimEnd()));
      }
    }
  }
  lines.push(...summariseStart(file, style));
  lines.push(...summariseRollouts(file));
  if (file.modelOutput) {
    lines.push(style.dim('  model output (stdout and stderr of the model code):'));
    for (const line of file.modelOutput.replace(/\n$/, '').split('\n')) lines.push(style.dim(`  | ${line}`));
  }
  for (const error of file.internalErrors ?? []) lines.push(`${style.path(file.path)} internal error: ${error}`);
  // A blank line closes each file's block, so that files stand apart when many are checked.
  return lines.join('\n') + '\n\n';
}

/** Monte Carlo figures (sampled models; exact ones with --rollouts): estimate, 95% interval, percentiles, reach. */
function summariseRollouts(file: JsonFile): string[] {
  const lines: string[] = [];
  for (const policy of ['optimal', 'learned', 'random'] as const) {
    const r = file.rollouts?.[policy];
    if (!r) continue;
    const p = r.return.percentiles;
    const ends = [`goal ${textProbability(r.reach.goal)}`, `failure ${textProbability(r.reach.failure)}`];
    if (r.reach.neutral > 0) ends.push(`neutral ${textProbability(r.reach.neutral)}`);
    if (r.reach.none > 0) ends.push(`cut/never ${textProbability(r.reach.none)}`);
    // Estimates carry sampling error: four significant digits say all they can.
    const short = (x: number | null) => (x === null ? '-' : String(Number(x.toPrecision(4))));
    lines.push(
      `  rollouts (${policy} policy, ${r.episodes} episodes, seed ${r.seed}): return ${short(r.return.mean)} ` +
        `(95% interval ${short(r.return.ci95.lower)} .. ${short(r.return.ci95.upper)})`,
      `    percentiles 5/25/50/75/95: ${[p.p5, p.p25, p.p50, p.p75, p.p95].map(short).join(' / ')}; steps mean ${short(r.length.mean)}, ` +
        `median ${short(r.length.percentiles.p50)}, max ${r.length.max}; ${ends.join(', ')}`,
    );
    if (r.cost) lines.push(`    ${costSentence(r.cost, short)}`);
  }
  const learning = file.rollouts?.learning;
  if (learning) lines.push(...learningLines(learning).map((line) => `  ${line}`));
  return lines;
}

/** What a narrower interval would cost, in one sentence. */
export function costSentence(cost: NonNullable<JsonRollouts['cost']>, short: (x: number | null) => string): string {
  const which = cost.defaultHalfWidth ? ' (1% of the mean; set halfWidth in the config)' : '';
  if (cost.episodesNeeded === null)
    return `a 95% interval of half-width ${short(cost.halfWidth)} needs an unknown number of episodes (no spread observed)`;
  const wanted = `a 95% interval of half-width +-${short(cost.halfWidth)}${which}`;
  if (cost.moreEpisodes === 0) return `${wanted} is reached (it needs ${cost.episodesNeeded} episodes)`;
  return `${wanted} needs ${cost.episodesNeeded} episodes: ${cost.moreEpisodes} more`;
}

/** The learning block in plain lines: method and budget spent, the start decision, the gap to the exact value. */
export function learningLines(learning: JsonLearning): string[] {
  const short = (x: number | null) => (x === null ? 'not known' : String(Number(x.toPrecision(4))));
  const method =
    learning.method === 'monte-carlo'
      ? `Monte Carlo control (${learning.visits}-visit, epsilon ${learning.epsilon})`
      : `Q-learning (epsilon ${learning.epsilon})`;
  const lines = [
    `learning: ${method}, spent ${learning.spent.episodes} of ${learning.budget.episodes} episodes and ${learning.spent.steps} of ${learning.budget.steps} steps; ` +
      `${learning.distinctKeys} distinct state keys` +
      (learning.unlearnedSteps > 0
        ? `; ${learning.unlearnedSteps} measured steps met states with no action tried (random action there)`
        : ''),
  ];
  const d = learning.decision;
  if (d) {
    const verdict = d.decided
      ? `"${d.best.action}" is best at 95%`
      : `not decided at 95%; ${d.moreEpisodes === 'inf' ? 'the two look equal (no number of episodes separates them)' : `about ${String(d.moreEpisodes)} more episodes per action would decide`}`;
    lines.push(
      `  start: "${d.best.action}" ${short(d.best.mean)} vs "${d.runnerUp.action}" ${short(d.runnerUp.mean)} over ${d.episodes} episodes each: ${verdict}`,
    );
  } else if (learning.noDecision) {
    lines.push(`  start: no decision (${learning.noDecision})`);
  }
  if (learning.exact) {
    const e = learning.exact;
    lines.push(
      `  exact optimal value ${textInterval(parseJsonNumber(e.optimal.lower), parseJsonNumber(e.optimal.upper))}; the learned policy's estimate differs by ${short(e.gap)}${e.withinInterval ? ' (within its 95% interval)' : ' (outside its 95% interval)'}`,
    );
  }
  return lines;
}

/** Reach probabilities at or below this (the default precision of the analysis) get no column of their own. */
const VISIBLE_PROBABILITY = 1e-6;

function summariseStart(file: JsonFile, style: Style): string[] {
  const a = file.analysis;
  if (!a) {
    return [`${style.path(file.path)}: not analysed${file.notAnalysed ? `: ${file.notAnalysed}` : ''}`];
  }
  const facts = [
    `${a.states} state${a.states === 1 ? '' : 's'}`,
    `${a.transitions} transition${a.transitions === 1 ? '' : 's'}`,
    a.objective,
    `discount ${a.discount}`,
  ];
  if (a.horizon !== undefined) facts.push(`horizon ${a.horizon}`);
  const header = `${style.path(file.path)}: ${facts.join(', ')}`;

  const reach = a.start.reach;
  // Columns that would show only rounding noise are left out.
  // An undetermined probability is shown, since it may be large.
  const visible = (p: JsonProbability) => p === 'undetermined' || p > VISIBLE_PROBABILITY;
  const showNeutral = visible(reach.optimal.neutral) || visible(reach.random.neutral);
  const showNone = visible(reach.optimal.none) || visible(reach.random.none);
  const columns = ['return from start', 'goal', 'failure'];
  if (showNeutral) columns.push('neutral');
  if (showNone) columns.push(a.horizon !== undefined ? 'cut/never' : 'never ends');
  const reachCells = (r?: JsonReach): string[] => {
    if (!r) return [];
    const cells = [textProbability(r.goal), textProbability(r.failure)];
    if (showNeutral) cells.push(textProbability(r.neutral));
    if (showNone) cells.push(textProbability(r.none));
    return cells;
  };
  const rows: string[][] = [
    ['', ...columns],
    ['optimal', interval(a.start.optimal), ...reachCells(reach.optimal)],
    ['random', interval(a.start.random), ...reachCells(reach.random)],
    ['worst', interval(a.start.worst)],
  ];
  const widths = rows[0].map((_, i) => Math.max(...rows.map((r) => (r[i] ?? '').length)));
  const table = rows.map((r) => `  ${r.map((cell, i) => cell.padEnd(widths[i])).join('  ')}`.trimEnd());
  const tail = [`  best goal reach ${textProbability(a.start.maxGoalReach)}`];
  const length = a.start.expectedLength;
  tail.push(`  expected steps  optimal ${steps(length.optimal)}, random ${steps(length.random)}`);
  if (!a.exact && typeof a.precision === 'number')
    tail.push(style.dim(`  bounds at most ${a.precision.toPrecision(2)} wide`));
  return [header, ...table, ...tail];
}

function interval(i: JsonInterval): string {
  return textInterval(parseJsonNumber(i.lower), parseJsonNumber(i.upper));
}

function steps(n: JsonNumber): string {
  const x = parseJsonNumber(n);
  if (Number.isNaN(x)) return 'undetermined';
  return Number.isFinite(x) ? String(Number(x.toPrecision(4))) : 'unbounded';
}

/** The closing line: counts per severity over all files. */
export function formatSummary(files: readonly JsonFile[], style: Style): string {
  const counts: Record<Severity, number> = { error: 0, warning: 0, info: 0 };
  for (const file of files) for (const f of file.findings) counts[f.severity]++;
  const part = (severity: Severity) => {
    const text = severityCount(counts[severity], severity);
    return counts[severity] > 0 ? style.severity(severity, text) : text;
  };
  const fileCount = `${files.length} file${files.length === 1 ? '' : 's'} checked`;
  return `${fileCount}: ${part('error')}, ${part('warning')}, ${part('info')}\n`;
}
