/**
 * Hover text from a completed analysis: on a state, its values under the optimal, worst and random
 * policies with their bounds, Q* of each action and where episodes end; on a transition, Q* of the
 * pairs it defines and the gap to the best action; on `discount` and `horizon`, the prepared text;
 * on a literal of a sampled model's source that names a state the learner met, the learned Q of
 * each action with its visits (an estimate from samples).
 * Reads typed arrays only, so an answer takes microseconds whatever the size of the spec.
 */
import { TERMINAL_OF_CODE } from '../model/compiled';
import { code, formatInterval, formatNumber, formatProbability, plural } from './format';
import type { AnalysisSnapshot, LearnedTables, ValueTables } from './protocol';

export interface HoverAnswer {
  markdown: string;
  /** The hovered range, in offsets of the analysed text. */
  start: number;
  end: number;
}

export function hoverAt(snapshot: AnalysisSnapshot, offset: number): HoverAnswer | undefined {
  for (const fixed of snapshot.fixedHovers) {
    if (offset >= fixed.start && offset < fixed.end) return fixed;
  }
  const index = snapshot.hoverIndex;
  if (!index) return learnedHoverAt(snapshot.learned, offset);
  const values = snapshot.values;
  const token = containing(index.tokenStart, index.tokenEnd, offset);
  if (token >= 0) {
    const state = index.tokenTarget[token];
    return {
      markdown: values ? stateHover(values, state) : notAnalysed(snapshot),
      start: index.tokenStart[token],
      end: index.tokenEnd[token],
    };
  }
  const transition = containing(index.transitionStart, index.transitionEnd, offset);
  if (transition >= 0) {
    const choices = index.transitionChoices.subarray(
      index.transitionChoiceStart[transition],
      index.transitionChoiceStart[transition + 1],
    );
    return {
      markdown: values ? transitionHover(values, choices) : notAnalysed(snapshot),
      start: index.transitionStart[transition],
      end: index.transitionEnd[transition],
    };
  }
  return undefined;
}

/** The index of the range that contains `offset` among sorted, disjoint ranges, or -1. */
function containing(starts: Int32Array, ends: Int32Array, offset: number): number {
  let low = 0;
  let high = starts.length - 1;
  let found = -1;
  while (low <= high) {
    const mid = (low + high) >> 1;
    if (starts[mid] <= offset) {
      found = mid;
      low = mid + 1;
    } else high = mid - 1;
  }
  return found >= 0 && offset < ends[found] ? found : -1;
}

function notAnalysed(snapshot: AnalysisSnapshot): string {
  return `No values for this spec: ${snapshot.notAnalysed ?? 'the analysis did not run'}.`;
}

export function stateName(values: ValueTables, state: number): string {
  return values.stateNames.slice(values.stateNameStart[state], values.stateNameStart[state + 1]);
}

function stateOfChoice(values: ValueTables, choice: number): number {
  // The last state whose first choice is at or before `choice` (choiceStart is non-decreasing).
  let low = 0;
  let high = values.stateCount - 1;
  while (low < high) {
    const mid = (low + high + 1) >> 1;
    if (values.choiceStart[mid] <= choice) low = mid;
    else high = mid - 1;
  }
  return low;
}

function stateHover(values: ValueTables, state: number): string {
  const name = code(stateName(values, state));
  const terminal = TERMINAL_OF_CODE[values.terminal[state]];
  if (terminal) {
    return `**${name}** · terminal (${terminal})${values.reachable[state] ? '' : ' · not reachable from the start'}\n\nThe episode ends on entering it; its value is 0.`;
  }
  const steps = values.horizon !== undefined ? ` with ${values.horizon} steps left` : '';
  const within = values.exact ? '' : ` (bounds within ${formatNumber(values.precision)})`;
  const title = `**${name}**${values.reachable[state] ? '' : ' · not reachable from the start'} · value${steps} from here${within}:`;
  const table = [
    `| policy | value | ends in goal | failure | neutral | ${values.horizon !== undefined ? 'cut by the horizon' : 'never ends'} |`,
    '|---|---|---|---|---|---|',
    `| optimal | ${formatInterval(values.optimalLower[state], values.optimalUpper[state])} | ${reachCells(values, values.optimalReach, state)} |`,
    `| worst | ${formatInterval(values.worstLower[state], values.worstUpper[state])} | | | | |`,
    `| random | ${formatInterval(values.randomLower[state], values.randomUpper[state])} | ${reachCells(values, values.randomReach, state)} |`,
  ].join('\n');
  const blocks = [title, table];
  const best: string[] = [];
  const qs: string[] = [];
  for (let c = values.choiceStart[state]; c < values.choiceStart[state + 1]; c++) {
    const action = code(values.actionNames[values.choiceAction[c]]);
    if (values.isBest[c]) best.push(action);
    qs.push(`${action} ${formatInterval(values.qLower[c], values.qUpper[c])}${values.isBest[c] ? ' ✓' : ''}`);
  }
  if (best.length > 0) blocks.push(`Best action: ${best.join(', ')}`);
  if (qs.length > 0) blocks.push(`Q*: ${qs.join(' · ')}`);
  blocks.push(
    `Best possible goal reach ${formatProbability(values.maxGoalReach[state], values.precision)} · expected steps to the end: ` +
      `optimal ${formatNumber(values.optimalLength[state])}, random ${formatNumber(values.randomLength[state])}`,
  );
  return blocks.join('\n\n');
}

function reachCells(values: ValueTables, reach: ValueTables['optimalReach'], state: number): string {
  return [reach.goal, reach.failure, reach.neutral, reach.none]
    .map((a) => formatProbability(a[state], values.precision))
    .join(' | ');
}

function transitionHover(values: ValueTables, choices: Int32Array): string {
  const lines: string[] = [];
  for (const c of choices) {
    const state = stateOfChoice(values, c);
    const action = values.actionNames[values.choiceAction[c]];
    const q = formatInterval(values.qLower[c], values.qUpper[c]);
    let verdict: string;
    if (values.isBest[c]) verdict = 'the best action here';
    else {
      let bestChoice = -1;
      for (let k = values.choiceStart[state]; k < values.choiceStart[state + 1]; k++) {
        if (values.isBest[k]) {
          bestChoice = k;
          break;
        }
      }
      const optimal = (values.optimalLower[state] + values.optimalUpper[state]) / 2;
      const mid = (values.qLower[c] + values.qUpper[c]) / 2;
      const gap = values.maximize ? optimal - mid : mid - optimal;
      const bestName =
        bestChoice >= 0
          ? ` (${code(values.actionNames[values.choiceAction[bestChoice]])}, ${formatNumber(optimal)})`
          : '';
      verdict = Number.isFinite(gap)
        ? `${formatNumber(gap)} ${values.maximize ? 'below' : 'above'} the best action${bestName}`
        : `not the best action${bestName}`;
    }
    lines.push(`${code(stateName(values, state))} → ${code(action)}: Q* ${q}, ${verdict}`);
  }
  return lines.join('\n\n');
}

/** Learned time steps shown per state with a horizon; the rest are counted. */
const LEARNED_ROWS = 12;

/** A literal naming a state learning met: each action's learned Q and visits, said to be an estimate. */
function learnedHoverAt(tables: LearnedTables | undefined, offset: number): HoverAnswer | undefined {
  if (!tables) return undefined;
  const token = containing(tables.tokenStart, tables.tokenEnd, offset);
  if (token < 0) return undefined;
  const key = tables.tokenKey[token];
  const name = tables.keyNames.slice(tables.keyNameStart[key], tables.keyNameStart[key + 1]);
  const first = tables.keyRowStart[key];
  const end = tables.keyRowStart[key + 1];
  const timed = tables.rowStep[first] >= 0;
  const method = tables.method === 'monte-carlo' ? 'Monte Carlo control' : 'Q-learning';
  const blocks = [`**${code(name)}** · learned by ${method} from samples: estimates, not bounds`];
  const rows = [
    timed ? '| steps taken | action | learned Q | visits |' : '| action | learned Q | visits |',
    timed ? '|---|---|---|---|' : '|---|---|---|',
  ];
  let visits = 0;
  for (let r = first; r < end; r++) {
    visits += tables.rowVisits[r];
    if (r - first >= LEARNED_ROWS) continue;
    for (let a = tables.rowActionStart[r]; a < tables.rowActionStart[r + 1]; a++) {
      const q = tables.actionVisits[a] > 0 ? formatNumber(tables.q[a]) : 'not tried';
      const cells = [code(tables.actionNames[tables.actionName[a]]), q, String(tables.actionVisits[a])];
      rows.push(`| ${timed ? `${tables.rowStep[r]} | ` : ''}${cells.join(' | ')} |`);
    }
  }
  blocks.push(rows.join('\n'));
  const more = end - first > LEARNED_ROWS ? ` (${plural(end - first - LEARNED_ROWS, 'more time step')} not shown)` : '';
  blocks.push(
    `Visited ${plural(visits, 'time')} in training${more}; learning spent ${plural(tables.spentSteps, 'step')} in ${plural(tables.spentEpisodes, 'episode')}. ` +
      'Each Q is estimated from the sampled episodes, never a bound on the true value.',
  );
  return { markdown: blocks.join('\n\n'), start: tables.tokenStart[token], end: tables.tokenEnd[token] };
}
