import { expectedRewards, graphOf } from '../analysis/graph';
import { routeFromStart } from '../analysis/loops';
import { canReach, reachableFromStart } from '../analysis/reachability';
import type { Analysis } from '../analysis/types';
import { stateName, type CompiledModel } from '../model/compiled';
import { listNames, quote } from '../load/names';
import {
  describePath,
  formatAmount,
  formatProbability,
  formatSigned,
  incompleteNote,
  stateSpan,
  traceOfPath,
} from './incentive-text';
import type { RelatedLocation, Rule } from './types';

/** A reachable region of an episodic spec that no policy can leave and that reaches no terminal. */
export const trapState: Rule = {
  id: 'trap-state',
  defaultSeverity: 'warning',
  summary: 'A reachable region that no policy can leave and from which no terminal is reachable.',
  needs: 'graph',
  sources: ['json', 'enumerable'],
  documentation: `
**Why it matters.** In an episodic spec (one that declares terminals) every episode is meant to
end. A region with no way out and no terminal inside is a trap: an episode that enters it runs
until the time limit, or forever. With discount 1 and no horizon the return there is undefined or
infinite (a step penalty sums to -infinity), and learners that bootstrap from it diverge; with a
discount the trap's value still silently shapes what the agent avoids or seeks. It is usually a
missing transition (the "way back" or the terminal that should be there) or a state that should
have been declared terminal.

**When it fires.** In a spec that declares at least one terminal, a set of non-terminal states is
reachable from the start, every action of every state in it stays inside, and no terminal can be
reached from it. One finding per connected region, at the state where the shortest route from
the start enters it; the trace is that route. Severity is **error** with discount 1 and no
horizon (the return there is not finite), **warning** otherwise.

**How to fix.** Add the transition that leads out (or to a terminal), mark the state terminal
(\`"failure"\` or \`"neutral"\` if being stuck should end the episode), or set a \`horizon\`.

**Example.**
\`\`\`jsonc
"states": { "ledge": {}, "pit": {}, "home": { "terminal": "goal" } },
"transitions": [
  { "from": "ledge", "action": "jump", "to": "pit", "reward": 0 },
  { "from": "pit", "action": "climb", "to": "pit", "reward": -1 }   // no way out of 'pit'
]
\`\`\`
`.trim(),
  check(ctx) {
    const model = ctx.model;
    if (!model || !model.terminal.some((code) => code !== 0)) return;
    const graph = graphOf(model);
    const reachable = ctx.analysis?.reachable ?? reachableFromStart(model);
    // A state that lost part of its dynamics to a broken edge may well lead out: never call it a trap.
    const exits = ctx.incomplete ? graph.absorbing.map((a, s) => a | ctx.incomplete!.brokenStates[s]) : graph.absorbing;
    const endsSomewhere = canReach(graph, exits);
    const trapped = new Uint8Array(model.stateCount);
    let any = false;
    for (let s = 0; s < model.stateCount; s++) {
      if (reachable[s] && !endsSomewhere[s]) {
        trapped[s] = 1;
        any = true;
      }
    }
    if (!any) return;
    const unending = model.discount === 1 && model.horizon === undefined;
    const reward = expectedRewards(model);
    for (const region of regionsOf(model, trapped)) {
      const inside = new Uint8Array(model.stateCount);
      for (const s of region) inside[s] = 1;
      const route = routeFromStart(graph, inside);
      const entry = route.length > 0 ? route[route.length - 1].state : region[0];
      const others = region.filter((s) => s !== entry);
      const name = quote(stateName(model, entry));
      const withOthers = others.length > 0 ? ` (with ${listNames(others.map((s) => stateName(model, s)))})` : '';
      const related: RelatedLocation[] = others.slice(0, 10).map((s) => ({
        span: stateSpan(ctx.spec, model, s),
        message: `${quote(stateName(model, s))} is part of the trap entered at ${name}`,
      }));
      const path = route.length > 1 ? `; the start reaches it by ${describePath(model, route)}` : '';
      ctx.report({
        message:
          `trap: once in ${name}${withOthers}, no action leads out and no terminal can be reached, so an episode that enters never ends` +
          `${model.horizon !== undefined ? ' before the time limit' : ''}; ${costOf(model, ctx.analysis, reward, region, entry)}${path}${incompleteNote(ctx.incomplete)}`,
        span: stateSpan(ctx.spec, model, entry),
        severity: unending && !ctx.incomplete ? 'error' : 'warning',
        trace: route.length > 0 ? traceOfPath(ctx.spec, model, route) : undefined,
        related,
      });
    }
  },
};

/** The connected regions (ignoring edge direction) of the marked states, each sorted, in order of their first state. */
function regionsOf(model: CompiledModel, marked: Uint8Array): number[][] {
  const parent = new Int32Array(model.stateCount);
  for (let s = 0; s < parent.length; s++) parent[s] = s;
  const find = (s: number): number => {
    while (parent[s] !== s) {
      parent[s] = parent[parent[s]];
      s = parent[s];
    }
    return s;
  };
  for (let s = 0; s < model.stateCount; s++) {
    if (!marked[s]) continue;
    for (let k = model.outcomeStart[model.choiceStart[s]]; k < model.outcomeStart[model.choiceStart[s + 1]]; k++) {
      const t = model.outcomeTarget[k];
      if (marked[t] && model.outcomeProb[k] > 0) parent[find(s)] = find(t);
    }
  }
  const groups = new Map<number, number[]>();
  for (let s = 0; s < model.stateCount; s++) {
    if (!marked[s]) continue;
    const root = find(s);
    const group = groups.get(root);
    if (group) group.push(s);
    else groups.set(root, [s]);
  }
  return [...groups.values()];
}

/** What the trap costs in return terms: what a step inside pays, its value, and how often the random policy falls in. */
function costOf(
  model: CompiledModel,
  analysis: Analysis | undefined,
  reward: Float64Array,
  region: number[],
  entry: number,
): string {
  let low = Infinity;
  let high = -Infinity;
  for (const s of region) {
    for (let c = model.choiceStart[s]; c < model.choiceStart[s + 1]; c++) {
      low = Math.min(low, reward[c]);
      high = Math.max(high, reward[c]);
    }
  }
  const parts: string[] = [];
  if (low === 0 && high === 0) parts.push('nothing is earned or lost in there');
  else
    parts.push(
      `each step inside pays ${low === high ? formatSigned(low) : `${formatSigned(low)} to ${formatSigned(high)}`}`,
    );
  if (analysis) {
    parts.push(
      `V* at ${quote(stateName(model, entry))} is ${formatInterval(analysis.optimal.values.lower[entry], analysis.optimal.values.upper[entry])}`,
    );
    if (model.horizon === undefined) {
      const fallIn = analysis.start.reach.random.none;
      if (fallIn > 0)
        parts.push(`the uniformly random policy never ends an episode with probability ${formatProbability(fallIn)}`);
    }
  }
  return parts.join(', ');
}

/** A value interval for a message: one number when the bounds agree to display precision. */
export function formatInterval(lower: number, upper: number): string {
  if (lower === -Infinity && upper === Infinity) return 'undefined (the total does not converge)';
  const a = formatAmount(lower);
  const b = formatAmount(upper);
  return a === b ? a : `between ${a} and ${b}`;
}
