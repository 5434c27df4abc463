/** Builders of `--format json` output for the gate's tests (invented figures). */
import type { JsonFile, JsonFinding, JsonOutput } from '../../server/src/cli/json-output';

export function finding(
  rule: string,
  line: number,
  message: string,
  severity: JsonFinding['severity'] = 'warning',
  column = 5,
): JsonFinding {
  return { rule, severity, message, line, column, endLine: line, endColumn: column + 15, trace: [] };
}

/** An analysis whose start has the given optimal return range and goal probability (both policies). */
export function analysis(
  optimal: [number, number],
  goal: number,
  random: [number, number] = [1, 1],
): NonNullable<JsonFile['analysis']> {
  const reach = { goal, failure: 1 - goal, none: 0, neutral: 0 };
  return {
    states: 4,
    transitions: 5,
    exact: true,
    start: {
      optimal: { lower: optimal[0], upper: optimal[1] },
      worst: { lower: -10, upper: -10 },
      random: { lower: random[0], upper: random[1] },
      reach: { optimal: reach, random: reach },
      maxGoalReach: goal,
      expectedLength: { optimal: 3, random: 7 },
    },
    outcomes: 7,
    objective: 'maximize',
    discount: 0.9,
    precision: 0,
    terms: [],
  };
}

export function output(files: JsonFile[]): JsonOutput {
  return { version: 1, files, summary: { files: files.length, error: 0, warning: 0, info: 0 } };
}
