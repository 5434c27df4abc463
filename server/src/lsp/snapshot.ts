/**
 * Turns a FileReport into what the language server keeps of it: LSP diagnostics with fixes,
 * a compact hover index and value tables of typed arrays (moved between threads without copying),
 * the summary lens and the fixed hovers on `discount` and `horizon`. Runs inside the analysis worker.
 */
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import {
  DiagnosticSeverity,
  DiagnosticTag,
  type Diagnostic,
  type DiagnosticRelatedInformation,
  type Range,
} from 'vscode-languageserver-types';
import type { LearnedState, RolloutReport, RolloutStats } from '../analysis/rollout-stats';
import type { Analysis } from '../analysis/types';
import type { WarmStart } from '../analysis/warm-start';
import type { FileReport } from '../analyze';
import type { ConfigFile } from '../config-file';
import { TERMINAL_CODE, stateName, type CompiledModel } from '../model/compiled';
import type { Finding } from '../rules/types';
import type { ParsedSpec, Span } from '../load/types';
import { formatDuration, formatInterval, formatNumber, formatProbability, plural, snapProbability } from './format';
import {
  TOKEN_STATE,
  type AnalysisSnapshot,
  type DiagnosticData,
  type FixedHover,
  type HoverIndex,
  type LearnedTables,
  type ValueTables,
} from './protocol';

/** Rules whose findings mark text that never takes effect, shown faded by editors. */
const UNNECESSARY_BY_RULE = new Set(['unreachable-state', 'terminal-has-transitions']);
/** Related locations beyond this many are left out: editors list them all, and a long trace drowns the message. */
const MAX_RELATED = 40;

export interface SnapshotInput {
  uri: string;
  version: number;
  report: FileReport;
  docsFolder?: string;
  configFile?: ConfigFile;
  durationMs: number;
}

export function buildSnapshot(input: SnapshotInput): AnalysisSnapshot {
  const { report, uri, version } = input;
  const lines = report.lines;
  const toRange = (span: Span): Range => ({ start: lines.position(span.start), end: lines.position(span.end) });
  const docLink = ruleDocLinker(input.docsFolder);
  const diagnostics = report.findings.map((finding) => toDiagnostic(finding, uri, version, toRange, docLink));
  const analysis = report.analysis;
  const model = report.model;
  const snapshot: AnalysisSnapshot = {
    uri,
    version,
    diagnostics,
    rootOffset: report.spec.rootSpan.start,
    lens: analysis
      ? lensLines(analysis, model?.maximize ?? true)
      : report.rollouts
        ? rolloutLensLines(report.rollouts)
        : [],
    status: statusLine(report, input.durationMs),
    notAnalysed: report.notAnalysed,
    modelOutput: report.modelOutput,
    fixedHovers: model ? fixedHovers(report.text, report.spec, model, analysis) : [],
    internalErrors: report.internalErrors,
    stateCount: model?.stateCount,
    durationMs: input.durationMs,
    cancelled: report.cancelled === true,
  };
  if (input.configFile) {
    const file = input.configFile;
    const configUri = pathToFileURL(file.path).href;
    const configRange = (span: Span): Range => ({
      start: file.lines.position(span.start),
      end: file.lines.position(span.end),
    });
    snapshot.configFile = {
      path: file.path,
      uri: configUri,
      text: file.text,
      diagnostics: file.findings.map((finding) => toDiagnostic(finding, configUri, 0, configRange, docLink)),
    };
  }
  if (model) snapshot.hoverIndex = buildHoverIndex(report.spec, model);
  const learned = learnedTables(report);
  if (learned) snapshot.learned = learned;
  if (model && analysis) snapshot.values = valueTables(model, analysis);
  return snapshot;
}

/** Every ArrayBuffer reachable from the snapshot's typed arrays, each once, for a zero-copy transfer. */
export function transferList(snapshot: AnalysisSnapshot): ArrayBuffer[] {
  const buffers = new Set<ArrayBuffer>();
  const visit = (value: unknown): void => {
    if (ArrayBuffer.isView(value)) {
      if (value.buffer instanceof ArrayBuffer) buffers.add(value.buffer);
    } else if (value && typeof value === 'object' && !Array.isArray(value)) {
      for (const inner of Object.values(value)) visit(inner);
    }
  };
  visit(snapshot.hoverIndex);
  visit(snapshot.values);
  visit(snapshot.learned);
  const solutions = (start: WarmStart | undefined): void => {
    if (!start) return;
    visit(start.values);
    buffers.add(start.idStart.buffer as ArrayBuffer);
    for (const inner of Object.values(start.derived ?? {})) solutions(inner);
  };
  solutions(snapshot.solution);
  return [...buffers];
}

function ruleDocLinker(docsFolder: string | undefined): (rule: string) => string | undefined {
  const cache = new Map<string, string | undefined>();
  return (rule) => {
    if (!docsFolder) return undefined;
    if (!cache.has(rule)) {
      const file = join(docsFolder, `${rule}.md`);
      cache.set(rule, existsSync(file) ? pathToFileURL(file).href : undefined);
    }
    return cache.get(rule);
  };
}

const SEVERITY = {
  error: DiagnosticSeverity.Error,
  warning: DiagnosticSeverity.Warning,
  info: DiagnosticSeverity.Information,
};

function toDiagnostic(
  finding: Finding,
  uri: string,
  version: number,
  toRange: (span: Span) => Range,
  docLink: (rule: string) => string | undefined,
): Diagnostic {
  const related: DiagnosticRelatedInformation[] = [];
  for (const r of finding.related ?? [])
    related.push({ location: { uri, range: toRange(r.span) }, message: r.message });
  (finding.trace ?? []).forEach((step, i) => {
    if (!step.span) return;
    const text = step.action ? `${step.state} → ${step.action}` : step.state;
    related.push({ location: { uri, range: toRange(step.span) }, message: `trace ${i + 1}: ${text}` });
  });
  const tags: DiagnosticTag[] = [];
  const findingTags = finding.tags ?? (UNNECESSARY_BY_RULE.has(finding.rule) ? ['unnecessary'] : []);
  if (findingTags.includes('unnecessary')) tags.push(DiagnosticTag.Unnecessary);
  if (findingTags.includes('deprecated')) tags.push(DiagnosticTag.Deprecated);
  const data: DiagnosticData = {
    rule: finding.rule,
    version,
    fixes: (finding.fixes ?? []).map((fix) => ({
      title: fix.title,
      edits: fix.edits.map((edit) => ({ start: edit.span.start, end: edit.span.end, newText: edit.newText })),
    })),
  };
  const diagnostic: Diagnostic = {
    range: toRange(finding.span),
    severity: SEVERITY[finding.severity],
    source: 'episcope',
    code: finding.rule,
    message: finding.message,
    data,
  };
  const href = docLink(finding.rule);
  if (href) diagnostic.codeDescription = { href };
  if (related.length > 0) diagnostic.relatedInformation = related.slice(0, MAX_RELATED);
  if (tags.length > 0) diagnostic.tags = tags;
  return diagnostic;
}

function statusLine(report: FileReport, durationMs: number): string {
  const model = report.model;
  if (!model) return report.notAnalysed ? `not analysed: ${report.notAnalysed}` : 'not analysed';
  const parts = [plural(model.stateCount, 'state'), plural(model.choiceCount, 'state-action pair')];
  if (report.analysis)
    parts.push(report.analysis.exact ? 'exact' : `bounds within ${formatNumber(report.analysis.precision)}`);
  else if (report.notAnalysed) parts.push(`no values: ${report.notAnalysed}`);
  parts.push(formatDuration(durationMs));
  return parts.join(' · ');
}

/** The summary lens: the start's return ranges under the three policies, then where episodes end. */
export function lensLines(analysis: Analysis, maximize: boolean): string[] {
  const start = analysis.start;
  const noun = maximize ? 'Return' : 'Cost';
  const horizon = analysis.model.horizon;
  const within = horizon !== undefined ? ` within ${plural(horizon, 'step')}` : '';
  const returns =
    `${noun}${within} from the start: optimal ${formatInterval(start.optimal.lower, start.optimal.upper)}` +
    ` · random ${formatInterval(start.random.lower, start.random.upper)}` +
    ` · worst ${formatInterval(start.worst.lower, start.worst.upper)}`;
  const optimal = start.reach.optimal;
  const p = analysis.precision;
  const percent = (x: number): string => formatProbability(x, p);
  const reach =
    `Goal reach: optimal ${percent(optimal.goal)} · random ${percent(start.reach.random.goal)} · best possible ${percent(start.maxGoalReach)}` +
    (snapProbability(optimal.failure, p) > 0 ? ` · failure under optimal ${percent(optimal.failure)}` : '') +
    (snapProbability(optimal.none, p) > 0
      ? ` · never ends${horizon !== undefined ? ' or cut' : ''} ${percent(optimal.none)}`
      : '');
  return [returns, reach];
}

/**
 * The lens of a model known only by sampling: Monte Carlo estimates with their 95% intervals
 * (labelled as estimates, never as bounds), the random policy's and, when learning ran, the greedy
 * policy of the learned Q with what learning spent.
 */
export function rolloutLensLines(rollouts: RolloutReport): string[] {
  const estimate = (stats: RolloutStats): string => {
    const r = stats.return;
    return `${formatNumber(r.mean)} (95% ${formatNumber(r.ci95.lower)} .. ${formatNumber(r.ci95.upper)}, ${plural(stats.episodes, 'episode')})`;
  };
  const lines: string[] = [];
  const parts: string[] = [];
  if (rollouts.random) parts.push(`random ${estimate(rollouts.random)}`);
  if (rollouts.learned) parts.push(`learned greedy ${estimate(rollouts.learned)}`);
  if (parts.length > 0) lines.push(`Estimated return from the start (sampled): ${parts.join(' · ')}`);
  const learning = rollouts.learning;
  if (learning)
    lines.push(
      `Learning (${learning.method}): ${plural(learning.spent.steps, 'step')} in ${plural(learning.spent.episodes, 'episode')} spent`,
    );
  return lines;
}

/**
 * The hover index: state references (declaration keys, start entries, from/to, potentials) and
 * transition objects, in offsets of the analysed text. A span shared by several states (generated
 * states of TypeScript models point at the function that made them) is left out, as it names none.
 * Built with typed arrays and a numeric sort: a 100k-state spec has half a million references.
 */
export function buildHoverIndex(spec: ParsedSpec, model: CompiledModel): HoverIndex {
  let capacity = spec.states.length + spec.start.length + spec.potential.length;
  for (const t of spec.transitions) capacity += 1 + t.outcomes.length;
  const starts = new Int32Array(capacity);
  const ends = new Int32Array(capacity);
  const states = new Int32Array(capacity);
  let count = 0;
  // Consecutive references often name the same state (a state's transitions, one after another).
  let lastId: string | undefined;
  let lastState: number | undefined;
  const add = (id: string, span: Span | undefined): void => {
    if (id !== lastId) {
      lastId = id;
      lastState = model.stateIndex.get(id);
    }
    if (lastState === undefined || !span || span.end <= span.start) return;
    starts[count] = span.start;
    ends[count] = span.end;
    states[count++] = lastState;
  };
  for (const s of spec.states) add(s.id, s.span);
  for (const s of spec.start) add(s.state, s.span);
  for (const p of spec.potential) add(p.state, p.span);
  for (const t of spec.transitions) {
    add(t.from, t.fromSpan);
    for (const o of t.outcomes) add(o.state, o.stateSpan);
  }
  const order = sortedByStart(starts.subarray(0, count));
  const kept = new Int32Array(count);
  let keptCount = 0;
  for (let i = 0; i < order.length; i++) {
    const first = order[i];
    let ambiguous = false;
    while (i + 1 < order.length && starts[order[i + 1]] === starts[first] && ends[order[i + 1]] === ends[first]) {
      i++;
      if (states[order[i]] !== states[first]) ambiguous = true;
    }
    if (ambiguous || (keptCount > 0 && ends[kept[keptCount - 1]] > starts[first])) continue;
    kept[keptCount++] = first;
  }
  const tokenStart = new Int32Array(keptCount);
  const tokenEnd = new Int32Array(keptCount);
  const tokenTarget = new Int32Array(keptCount);
  for (let i = 0; i < keptCount; i++) {
    tokenStart[i] = starts[kept[i]];
    tokenEnd[i] = ends[kept[i]];
    tokenTarget[i] = states[kept[i]];
  }

  // Transitions that share a span (a `from` or `action` array) form one group with every choice they define.
  const groupOf = new Int32Array(spec.transitions.length);
  const groupByStart = new Map<number, number>();
  const groupStart: number[] = [];
  const groupEnd: number[] = [];
  spec.transitions.forEach((t, index) => {
    let group = groupByStart.get(t.span.start);
    if (group === undefined) {
      group = groupStart.length;
      groupByStart.set(t.span.start, group);
      groupStart.push(t.span.start);
      groupEnd.push(t.span.end);
    }
    groupOf[index] = group;
  });
  const choiceCount = new Int32Array(groupStart.length);
  for (let c = 0; c < model.choiceCount; c++) {
    const t = model.choiceTransition[c];
    if (t >= 0 && t < groupOf.length) choiceCount[groupOf[t]]++;
  }
  const groupOrder: number[] = [];
  for (const g of sortedByStart(groupStart)) {
    const previous = groupOrder[groupOrder.length - 1];
    if (choiceCount[g] > 0 && (previous === undefined || groupEnd[previous] <= groupStart[g])) groupOrder.push(g);
  }
  const slot = new Int32Array(groupStart.length).fill(-1);
  const transitionChoiceStart = new Int32Array(groupOrder.length + 1);
  groupOrder.forEach((g, i) => {
    slot[g] = i;
    transitionChoiceStart[i + 1] = transitionChoiceStart[i] + choiceCount[g];
  });
  const fill = transitionChoiceStart.slice(0, groupOrder.length);
  const transitionChoices = new Int32Array(transitionChoiceStart[groupOrder.length]);
  for (let c = 0; c < model.choiceCount; c++) {
    const t = model.choiceTransition[c];
    const i = t >= 0 && t < groupOf.length ? slot[groupOf[t]] : -1;
    if (i >= 0) transitionChoices[fill[i]++] = c;
  }

  return {
    tokenStart,
    tokenEnd,
    tokenKind: new Uint8Array(keptCount).fill(TOKEN_STATE),
    tokenTarget,
    transitionStart: pick(groupStart, groupOrder),
    transitionEnd: pick(groupEnd, groupOrder),
    transitionChoiceStart,
    transitionChoices,
  };
}

/**
 * The learned Q and visits at the states whose keys the source writes as literals (a sampled
 * model's `summary.sourceStates`), with the literals' ranges: typed arrays, a row per learning state.
 */
export function learnedTables(report: FileReport): LearnedTables | undefined {
  const learning = report.rollouts?.learning;
  const literals = report.spec.typescript?.literals;
  const states = learning?.sourceStates;
  if (!learning || !literals || !states || states.length === 0) return undefined;
  const keyIndex = new Map<string, number>();
  const rowsOfKey: LearnedState[][] = [];
  for (const state of states) {
    let k = keyIndex.get(state.key);
    if (k === undefined) {
      k = rowsOfKey.length;
      keyIndex.set(state.key, k);
      rowsOfKey.push([]);
    }
    rowsOfKey[k].push(state);
  }
  const named = literals.filter((literal) => keyIndex.has(literal.key) && literal.span.end > literal.span.start);
  const order = sortedByStart(named.map((literal) => literal.span.start));
  const tokens: number[] = [];
  for (const i of order) {
    const previous = tokens[tokens.length - 1];
    if (previous === undefined || named[previous].span.end <= named[i].span.start) tokens.push(i);
  }
  if (tokens.length === 0) return undefined;
  const rows = rowsOfKey.flatMap((list) => [...list].sort((a, b) => (a.step ?? 0) - (b.step ?? 0)));
  const keyRowStart = new Int32Array(rowsOfKey.length + 1);
  rowsOfKey.forEach((list, k) => (keyRowStart[k + 1] = keyRowStart[k] + list.length));
  const actionCount = rows.reduce((sum, row) => sum + row.actions.length, 0);
  const actionNames: string[] = [];
  const nameIndex = new Map<string, number>();
  const tables: LearnedTables = {
    method: learning.method,
    spentSteps: learning.spent.steps,
    spentEpisodes: learning.spent.episodes,
    tokenStart: Int32Array.from(tokens, (i) => named[i].span.start),
    tokenEnd: Int32Array.from(tokens, (i) => named[i].span.end),
    tokenKey: Int32Array.from(tokens, (i) => keyIndex.get(named[i].key)!),
    keyNames: '',
    keyNameStart: new Int32Array(rowsOfKey.length + 1),
    keyRowStart,
    rowStep: new Int32Array(rows.length),
    rowVisits: new Int32Array(rows.length),
    rowActionStart: new Int32Array(rows.length + 1),
    actionName: new Int32Array(actionCount),
    q: new Float64Array(actionCount),
    actionVisits: new Int32Array(actionCount),
    actionNames,
  };
  const names = rowsOfKey.map((list) => list[0].key);
  names.forEach((name, k) => (tables.keyNameStart[k + 1] = tables.keyNameStart[k] + name.length));
  tables.keyNames = names.join('');
  let a = 0;
  rows.forEach((row, r) => {
    tables.rowStep[r] = row.step ?? -1;
    tables.rowVisits[r] = row.visits;
    for (const action of row.actions) {
      let n = nameIndex.get(action.action);
      if (n === undefined) {
        n = actionNames.length;
        nameIndex.set(action.action, n);
        actionNames.push(action.action);
      }
      tables.actionName[a] = n;
      tables.q[a] = action.q;
      tables.actionVisits[a++] = action.visits;
    }
    tables.rowActionStart[r + 1] = a;
  });
  return tables;
}

/** values[at[i]] for each i, as typed arrays (Int32Array.from with a mapping function is far slower). */
function pick(values: readonly number[], at: readonly number[]): Int32Array {
  const out = new Int32Array(at.length);
  for (let i = 0; i < at.length; i++) out[i] = values[at[i]];
  return out;
}

/** Indices of `starts` in increasing order of their value (ties in index order), by one numeric sort. */
function sortedByStart(starts: ArrayLike<number>): Int32Array {
  const count = starts.length;
  const order = new Int32Array(count);
  // Offsets are below 2^31 and indices below 2^21 here, so start * 2^21 + index is an exact double.
  if (count < 1 << 21) {
    const keys = new Float64Array(count);
    for (let i = 0; i < count; i++) keys[i] = starts[i] * 2097152 + i;
    keys.sort();
    for (let i = 0; i < count; i++) order[i] = keys[i] % 2097152;
    return order;
  }
  for (let i = 0; i < count; i++) order[i] = i;
  return order.sort((a, b) => starts[a] - starts[b] || a - b);
}

/**
 * Copies the figures hovers need out of the model and analysis. Copies (not views) so that the
 * transfer moves exactly these buffers and nothing else the analysis allocated.
 */
function valueTables(model: CompiledModel, analysis: Analysis): ValueTables {
  const f = (a: Float64Array): Float64Array => Float64Array.from(a);
  const reach = (r: Analysis['optimal']['reach']) => ({
    goal: f(r.goal),
    failure: f(r.failure),
    neutral: f(r.neutral),
    none: f(r.none),
  });
  const names: string[] = [];
  const nameStart = new Int32Array(model.stateCount + 1);
  let length = 0;
  for (let s = 0; s < model.stateCount; s++) {
    const name = stateName(model, s);
    nameStart[s] = length;
    names.push(name);
    length += name.length;
  }
  nameStart[model.stateCount] = length;
  return {
    stateCount: model.stateCount,
    discount: model.discount,
    horizon: model.horizon,
    maximize: model.maximize,
    precision: analysis.precision,
    exact: analysis.exact,
    actionNames: [...model.actionNames],
    stateNames: names.join(''),
    stateNameStart: nameStart,
    terminal: Uint8Array.from(model.terminal),
    reachable: Uint8Array.from(analysis.reachable),
    choiceStart: Int32Array.from(model.choiceStart),
    choiceAction: Int32Array.from(model.choiceAction),
    optimalLower: f(analysis.optimal.values.lower),
    optimalUpper: f(analysis.optimal.values.upper),
    worstLower: f(analysis.worst.values.lower),
    worstUpper: f(analysis.worst.values.upper),
    randomLower: f(analysis.random.values.lower),
    randomUpper: f(analysis.random.values.upper),
    qLower: f(analysis.q.lower),
    qUpper: f(analysis.q.upper),
    isBest: Uint8Array.from(analysis.isBest),
    maxGoalReach: f(analysis.maxGoalReach),
    optimalReach: reach(analysis.optimal.reach),
    randomReach: reach(analysis.random.reach),
    optimalLength: f(analysis.optimal.expectedLength),
    randomLength: f(analysis.random.expectedLength),
  };
}

/** Hovers on `discount` and `horizon`: what they mean for this spec's goals. */
function fixedHovers(
  text: string,
  spec: ParsedSpec,
  model: CompiledModel,
  analysis: Analysis | undefined,
): FixedHover[] {
  const hovers: FixedHover[] = [];
  const goals = nearestGoals(model);
  const lines: string[] = [];
  if (spec.discount) {
    const discount = spec.discount.value;
    const effective =
      discount < 1
        ? `1/(1 - ${formatNumber(discount)}) = ${formatNumber(1 / (1 - discount))} steps`
        : '∞ (undiscounted)';
    lines.push(`**discount ${formatNumber(discount)}** · effective horizon ${effective}`);
    if (goals.length === 0) lines.push('', 'No goal terminal is reachable from the start.');
    for (const goal of goals) {
      const weight = discount ** (goal.distance - 1);
      lines.push(
        '',
        `Goal ${quote(model.stateIds[goal.state])}: ${plural(goal.distance, 'step')} from the start at the nearest; entering it pays ` +
          `${formatNumber(goal.reward)}, worth ${formatNumber(goal.reward * weight)} seen from the start ` +
          `(${formatNumber(discount)}^${goal.distance - 1} = ${formatNumber(weight)} of its size).`,
      );
    }
    if (analysis) {
      lines.push(
        '',
        `Optimal ${model.maximize ? 'return' : 'cost'} from the start: ${formatInterval(analysis.start.optimal.lower, analysis.start.optimal.upper)}.`,
      );
    }
    hovers.push({ ...propertyRange(text, 'discount', spec.discount.span), markdown: lines.join('\n') });
  }
  if (spec.horizon) {
    const horizon = spec.horizon.value;
    const out = [
      `**horizon ${horizon}** · episodes are cut after ${plural(horizon, 'step')} (truncation, not termination); values count the steps left.`,
    ];
    for (const goal of goals) {
      out.push(
        '',
        `Goal ${quote(model.stateIds[goal.state])}: ${plural(goal.distance, 'step')} from the start at the nearest${goal.distance > horizon ? ', beyond the time limit' : ''}.`,
      );
    }
    hovers.push({ ...propertyRange(text, 'horizon', spec.horizon.span), markdown: out.join('\n') });
  }
  return hovers;
}

function quote(id: string): string {
  return `\`${id.replace(/`/g, "'")}\``;
}

/** The property `name: value` around a value span, so a hover on the key or the value answers. */
function propertyRange(text: string, name: string, valueSpan: Span): { start: number; end: number } {
  const before = text.slice(Math.max(0, valueSpan.start - 200), valueSpan.start);
  const match = new RegExp(`["']?${name}["']?\\s*:\\s*$`).exec(before);
  const start = match ? valueSpan.start - before.length + match.index : valueSpan.start;
  return { start, end: valueSpan.end };
}

/**
 * The goals nearest to the start by number of steps (breadth-first search over outcomes with
 * positive probability), with the best reward paid on entering each along a shortest route.
 */
export function nearestGoals(
  model: CompiledModel,
  limit = 3,
): Array<{ state: number; distance: number; reward: number }> {
  const distance = new Int32Array(model.stateCount).fill(-1);
  const queue = new Int32Array(model.stateCount);
  let head = 0;
  let tail = 0;
  for (const s of model.startState) {
    if (distance[s] === -1) {
      distance[s] = 0;
      queue[tail++] = s;
    }
  }
  while (head < tail) {
    const s = queue[head++];
    for (let c = model.choiceStart[s]; c < model.choiceStart[s + 1]; c++) {
      for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
        const t = model.outcomeTarget[k];
        if (model.outcomeProb[k] > 0 && distance[t] === -1) {
          distance[t] = distance[s] + 1;
          queue[tail++] = t;
        }
      }
    }
  }
  const best = new Map<number, number>();
  const better = (a: number, b: number): boolean => (model.maximize ? a > b : a < b);
  for (let s = 0; s < model.stateCount; s++) {
    if (distance[s] < 0) continue;
    for (let c = model.choiceStart[s]; c < model.choiceStart[s + 1]; c++) {
      for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
        const t = model.outcomeTarget[k];
        if (model.terminal[t] !== TERMINAL_CODE.goal || model.outcomeProb[k] <= 0 || distance[t] !== distance[s] + 1)
          continue;
        const previous = best.get(t);
        if (previous === undefined || better(model.outcomeReward[k], previous)) best.set(t, model.outcomeReward[k]);
      }
    }
  }
  return [...best.entries()]
    .map(([state, reward]) => ({ state, distance: distance[state], reward }))
    .sort((a, b) => a.distance - b.distance || a.state - b.state)
    .slice(0, limit);
}
