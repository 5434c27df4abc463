/**
 * Wraps an enumerable spec as a black box: a sampled TypeScript model whose `sample` draws an
 * outcome of the compiled model by its probability, with no `outcomes` to enumerate. What Episcope
 * then learns about it comes from samples only, so its findings can be compared with the exact ones.
 */
import { compileSpec } from '../../server/src/model/compile';
import { TERMINAL_OF_CODE, stateName } from '../../server/src/model/compiled';
import { parseJsonSpec } from '../../server/src/load/json';

/** The TypeScript text of the black box, or why the spec cannot be wrapped (e.g. a shaping potential). */
export function blackBoxOf(jsonText: string): { text?: string; reason?: string } {
  const { spec } = parseJsonSpec(jsonText);
  const { model, reason } = compileSpec(spec);
  if (!model) return { reason };
  if (model.potential)
    return { reason: 'a shaping potential is a property of states, which a black box does not expose' };
  const table: Record<
    string,
    Record<string, Array<[number, string, number | Record<string, number>, string | null]>>
  > = {};
  for (let s = 0; s < model.stateCount; s++) {
    if (model.terminal[s] !== 0) continue;
    const actions: (typeof table)[string] = {};
    for (let c = model.choiceStart[s]; c < model.choiceStart[s + 1]; c++) {
      const outs: (typeof actions)[string] = [];
      for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
        let reward: number | Record<string, number> = model.outcomeReward[k];
        if (model.termNames.length > 0) {
          const terms: Record<string, number> = {};
          let rest = model.outcomeReward[k];
          model.termNames.forEach((name, t) => {
            terms[name] = model.outcomeTermReward[t][k];
            rest -= terms[name];
          });
          if (Math.abs(rest) > 1e-12)
            return { reason: 'a reward with an untyped part beside declared terms cannot be written as terms' };
          reward = terms;
        }
        const target = model.outcomeTarget[k];
        outs.push([
          model.outcomeProb[k],
          stateName(model, target),
          reward,
          TERMINAL_OF_CODE[model.terminal[target]] ?? null,
        ]);
      }
      actions[model.actionNames[model.choiceAction[c]]] = outs;
    }
    table[stateName(model, s)] = actions;
  }
  const start = Array.from(model.startState, (s, i): [string, number] => [stateName(model, s), model.startProb[i]]);
  const terms = Object.fromEntries(
    spec.rewardTerms.map((t) => [t.name, { direction: t.direction, ...(t.shaping ? { shaping: true } : {}) }]),
  );
  const text = `import { defineMdp } from 'episcope';
const TABLE: Record<string, Record<string, Array<[number, string, any, any]>>> = ${JSON.stringify(table)};
const START: Array<[string, number]> = ${JSON.stringify(start)};
export default defineMdp({
  name: 'black-box',
  objective: '${model.maximize ? 'maximize' : 'minimize'}',
  discount: ${model.discount},
${model.horizon !== undefined ? `  horizon: ${model.horizon},\n` : ''}${spec.rewardTerms.length > 0 ? `  rewardTerms: ${JSON.stringify(terms)},\n` : ''}  start(rng) {
    let u = rng();
    for (const [state, p] of START) if ((u -= p) < 0) return state;
    return START[START.length - 1][0];
  },
  actions: (state: string) => Object.keys(TABLE[state]),
  sample(state: string, action: string, rng) {
    const outs = TABLE[state][action];
    let u = rng();
    for (const [p, next, reward, kind] of outs) if ((u -= p) < 0) return { state: next, reward, terminal: kind ?? undefined };
    const [, next, reward, kind] = outs[outs.length - 1];
    return { state: next, reward, terminal: kind ?? undefined };
  },
});
`;
  return { text };
}
