/**
 * End components whose best mean reward is exactly 0 although they hold non-zero rewards (a cycle
 * that loses 1 and wins 1 back), at discount 1. Their gain bounds can only close around 0, so the
 * mean-payoff classification leaves them undecided. Where the best gain is 0, the total reward is
 * finite when a bias (relative value) h exists with h(s) >= sigma*r(c) + sum p h(s') for every
 * choice that stays in the component, with equality on a policy that stays for 0 (the gain-0
 * optimality equation: M. Puterman, Markov Decision Processes, 1994, sections 8.2 and 9.1). Then
 * the rewards reshaped by the bias, r'(c) = r(c) + sum p b(s') - b(s) with b = sigma*h (0 outside
 * the component), pay at most 0 in the optimiser's direction inside it, the component becomes an
 * ordinary one of best mean 0, and V = V' + b on every state: a run that ends sees the bias
 * telescope to -b(start), and a run that stays forever does so, for a finite total, only in a
 * zero-reward part where b is 0.
 *
 * Accepted only when: the bias estimate (relative value iteration, mean-payoff.ts) satisfies the
 * inequality to within TOLERANCE times the reward scale; the choices where it is tight form end
 * components that pay exactly 0 in the original rewards; and the estimate is the same on all of
 * them (it is normalised to 0 there). Otherwise the component stays undecided, which is sound.
 */
import type { AnalysisContext } from './total-reward';
import { maximalEndComponents } from './end-components';
import { gainBounds, GAIN_UNDECIDED, type MdpGainClasses } from './mean-payoff';

/** Relative slack of the bias check (common practice: well above float rounding, far below the reported precision). */
const TOLERANCE = 1e-9;

export interface ZeroGainReshaping {
  /** The reshaped expected reward per choice. */
  reward: Float64Array;
  /** b per state (0 outside the reshaped components): V = V' + b. */
  bias: Float64Array;
}

/** Reshapes every undecided end component of best mean 0 that passes the checks; undefined when none does. */
export function reshapeZeroGains(
  ctx: AnalysisContext,
  gains: MdpGainClasses,
  reward: Float64Array,
  sigma: number,
): ZeroGainReshaping | undefined {
  const { model, graph, mecs } = ctx;
  const { choiceStart, outcomeStart, outcomeTarget, outcomeProb } = model;
  const n = model.stateCount;
  let bias: Float64Array | undefined;
  // Staying choices where the bias inequality is tight: their reshaped reward is exactly 0.
  const tightChoice = new Uint8Array(model.choiceCount);
  const local = new Int32Array(n).fill(-1);
  for (let i = 0; i < mecs.count; i++) {
    if (gains.sign[i] !== GAIN_UNDECIDED) continue;
    const members = mecs.states[i];
    const bounds = gainBounds(graph, members, mecs.choiceIn, reward, sigma, local, ctx.gainBudget);
    let scale = 1;
    for (const c of mecs.choices[i]) scale = Math.max(scale, Math.abs(reward[c]));
    const slack = TOLERANCE * scale;
    if (!(bounds.lower >= -slack && bounds.upper <= slack)) continue;
    const h = new Float64Array(n);
    for (let j = 0; j < members.length; j++) h[members[j]] = bounds.relative[j];
    // sigma * (r + P h - h) per staying choice: at most 0, tight where (about) 0.
    const tight = new Uint8Array(model.choiceCount);
    const inside = new Uint8Array(n);
    for (const s of members) inside[s] = 1;
    let holds = true;
    for (const c of mecs.choices[i]) {
      const s = graph.choiceState[c];
      let gap = sigma * reward[c] - h[s];
      for (let k = outcomeStart[c]; k < outcomeStart[c + 1]; k++) gap += outcomeProb[k] * h[outcomeTarget[k]];
      if (gap > slack) holds = false;
      else if (gap >= -slack) tight[c] = 1;
    }
    if (!holds) continue;
    const stays = maximalEndComponents(graph, inside, tight);
    if (stays.count === 0) continue;
    let level = NaN;
    let ok = true;
    for (let j = 0; j < stays.count && ok; j++) {
      for (const c of stays.choices[j]) if (reward[c] !== 0) ok = false;
      for (const s of stays.states[j]) {
        if (Number.isNaN(level)) level = h[s];
        else if (Math.abs(h[s] - level) > slack) ok = false;
      }
    }
    if (!ok) continue;
    bias ??= new Float64Array(n);
    for (const s of members) bias[s] = sigma * (h[s] - level);
    for (let j = 0; j < stays.count; j++) for (const s of stays.states[j]) bias[s] = 0;
    for (const c of mecs.choices[i]) if (tight[c]) tightChoice[c] = 1;
  }
  if (!bias) return undefined;
  const reshaped = reward.slice();
  for (let s = 0; s < n; s++) {
    for (let c = choiceStart[s]; c < choiceStart[s + 1]; c++) {
      let shift = -bias[s];
      let magnitude = Math.abs(bias[s]);
      for (let k = outcomeStart[c]; k < outcomeStart[c + 1]; k++) {
        shift += outcomeProb[k] * bias[outcomeTarget[k]];
        magnitude += Math.abs(bias[outcomeTarget[k]]);
      }
      if (tightChoice[c]) reshaped[c] = 0;
      else if (magnitude !== 0) reshaped[c] = reward[c] + shift;
    }
  }
  return { reward: reshaped, bias };
}
