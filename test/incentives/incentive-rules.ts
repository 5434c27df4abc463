/** The ids of the reward-incentive rules (the catalog's rows from reward-loop to time-dependent-optimum). */
export const INCENTIVE_RULES = [
  'failure-preferred',
  'goal-discounted-away',
  'horizon-too-short',
  'living-reward',
  'objective-sign',
  'reward-loop',
  'shaping-changes-policy',
  'shaping-not-potential',
  'term-direction',
  'terminal-potential',
  'time-dependent-optimum',
];
