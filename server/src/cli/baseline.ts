/**
 * Comparison of a run against a baseline (an earlier `--format json` output, usually the base
 * branch's): which findings are new, which are fixed, and how each spec's start values moved.
 *
 * A finding's identity must survive edits that do not touch it (moving a transition, reformatting),
 * so it never includes a line or column: it is the rule, the file path and the message with its
 * numbers masked (`findingKey`). Several findings with the same key in one file are paired by exact
 * message first, then in line order; what is left over is new (current run) or fixed (baseline).
 */
import Ajv2020 from 'ajv/dist/2020';
import type { ValidateFunction } from 'ajv';
import outputSchema from '../../../schemas/cli-output.schema.json';
import { SEVERITY_ORDER, type Severity } from '../rules/types';
import type { JsonFile, JsonFinding, JsonInterval, JsonOutput } from './json-output';
import { parseJsonNumber, parseJsonProbability, type JsonProbability } from './numbers';

/** A baseline file that cannot be used; the message is one line for the user. */
export class BaselineError extends Error {}

// Compiled on first use: compiling takes about 0.1 s, which every run without --baseline would pay.
let outputValidator: ValidateFunction<JsonOutput> | undefined;
const validateOutput = (value: unknown): value is JsonOutput =>
  (outputValidator ??= new Ajv2020({ allErrors: false, strict: false }).compile<JsonOutput>(outputSchema))(value);

/** Reads a baseline from the text of a `--format json` output; throws BaselineError with a one-line reason. */
export function parseBaseline(text: string, name: string): JsonOutput {
  let value: unknown;
  try {
    value = JSON.parse(text);
  } catch (error) {
    const reason = error instanceof Error ? error.message.split('\n')[0] : String(error);
    throw new BaselineError(
      `baseline '${name}' is not JSON (${reason}); give it the output of 'episcope check --format json'`,
    );
  }
  if (
    typeof value === 'object' &&
    value !== null &&
    'version' in value &&
    (value as { version: unknown }).version !== 1
  ) {
    throw new BaselineError(
      `baseline '${name}' is version ${JSON.stringify((value as { version: unknown }).version)} output; this episcope reads version 1`,
    );
  }
  if (!validateOutput(value)) {
    const error = outputValidator?.errors?.[0];
    const where = error?.instancePath ? readablePointer(error.instancePath) : 'the top level';
    throw new BaselineError(
      `baseline '${name}' is not an 'episcope check --format json' output: ${where} ${error?.message ?? 'is invalid'}`,
    );
  }
  return value;
}

function readablePointer(pointer: string): string {
  return pointer
    .slice(1)
    .split('/')
    .map((part, i) => (/^\d+$/.test(part) ? `[${part}]` : i === 0 ? part : `.${part}`))
    .join('');
}

// ---------------------------------------------------------------------------------------------
// Finding identity

/**
 * The message with every number replaced by `#` and white space collapsed, so that a finding
 * whose figures move (a return that shifts after an unrelated edit, a line number in the text)
 * keeps its identity. Digits inside names (`cell-3-4`, `s12`) are kept.
 */
export function messageSkeleton(message: string): string {
  return message
    .replace(/(?<![\w.-])[-+\u2212]?(?:\d+(?:\.\d*)?|\.\d+)(?:e[-+]?\d+)?(?![\w-]*\w)/gi, '#')
    .replace(/\s+/g, ' ')
    .trim();
}

/** The location-independent identity of a finding: rule, file path and message skeleton. */
export function findingKey(rule: string, path: string, message: string): string {
  return `${rule}\u0000${path}\u0000${messageSkeleton(message)}`;
}

// ---------------------------------------------------------------------------------------------
// Comparison

export interface FindingChange {
  path: string;
  finding: JsonFinding;
}

export interface ValueShift<T> {
  before?: T;
  after?: T;
}

export interface SpecShift {
  path: string;
  /** added/removed: the spec is only in one run; changed: a start figure moved; unchanged: none did. */
  status: 'added' | 'removed' | 'changed' | 'unchanged';
  optimal: ValueShift<JsonInterval>;
  random: ValueShift<JsonInterval>;
  /** Probability of ending in a goal under the optimal policy. */
  goalOptimal: ValueShift<number>;
  /** Probability of ending in a goal under the uniformly random policy. */
  goalRandom: ValueShift<number>;
  /** How much moved: the largest relative shift of a return, or shift of a goal probability (for ordering). */
  magnitude: number;
}

export interface Comparison {
  newFindings: FindingChange[];
  fixedFindings: FindingChange[];
  /** Findings present in both runs. */
  unchangedFindings: number;
  /** Every spec of either run; the changed ones first, largest shift first. */
  specs: SpecShift[];
}

/** Compares a run with its baseline. Pure. */
export function compareWithBaseline(baseline: JsonOutput, current: JsonOutput): Comparison {
  const before = groupByKey(baseline.files);
  const after = groupByKey(current.files);
  const newFindings: FindingChange[] = [];
  const fixedFindings: FindingChange[] = [];
  let unchangedFindings = 0;
  for (const [key, now] of after) {
    const then = before.get(key) ?? [];
    const { unmatchedBefore, unmatchedAfter, matched } = pair(then, now);
    unchangedFindings += matched;
    newFindings.push(...unmatchedAfter);
    fixedFindings.push(...unmatchedBefore);
  }
  for (const [key, then] of before) if (!after.has(key)) fixedFindings.push(...then);

  const specs: SpecShift[] = [];
  const beforeFiles = new Map(baseline.files.map((f) => [f.path, f]));
  const afterFiles = new Map(current.files.map((f) => [f.path, f]));
  for (const file of current.files) specs.push(specShift(beforeFiles.get(file.path), file));
  for (const file of baseline.files) if (!afterFiles.has(file.path)) specs.push(specShift(file, undefined));

  const rank: Record<SpecShift['status'], number> = { added: 0, removed: 0, changed: 1, unchanged: 2 };
  specs.sort((a, b) => rank[a.status] - rank[b.status] || b.magnitude - a.magnitude || a.path.localeCompare(b.path));
  return { newFindings: sortChanges(newFindings), fixedFindings: sortChanges(fixedFindings), unchangedFindings, specs };
}

/** The new findings at or above a --fail-on level (the exit code with a baseline follows these). */
export function newFindingsAtOrAbove(comparison: Comparison, failOn: Severity | 'never'): FindingChange[] {
  if (failOn === 'never') return [];
  return comparison.newFindings.filter((c) => SEVERITY_ORDER[c.finding.severity] >= SEVERITY_ORDER[failOn]);
}

function groupByKey(files: readonly JsonFile[]): Map<string, FindingChange[]> {
  const groups = new Map<string, FindingChange[]>();
  for (const file of files) {
    for (const finding of file.findings) {
      const key = findingKey(finding.rule, file.path, finding.message);
      const list = groups.get(key) ?? [];
      list.push({ path: file.path, finding });
      groups.set(key, list);
    }
  }
  return groups;
}

/** Pairs findings of one key: identical messages first, then the rest in line order. */
function pair(
  then: FindingChange[],
  now: FindingChange[],
): { matched: number; unmatchedBefore: FindingChange[]; unmatchedAfter: FindingChange[] } {
  const restBefore = [...then];
  const restAfter: FindingChange[] = [];
  let matched = 0;
  for (const change of now) {
    const i = restBefore.findIndex((b) => b.finding.message === change.finding.message);
    if (i >= 0) {
      restBefore.splice(i, 1);
      matched++;
    } else restAfter.push(change);
  }
  const byLine = (a: FindingChange, b: FindingChange) =>
    a.finding.line - b.finding.line || a.finding.column - b.finding.column;
  restBefore.sort(byLine);
  restAfter.sort(byLine);
  const common = Math.min(restBefore.length, restAfter.length);
  return {
    matched: matched + common,
    unmatchedBefore: restBefore.slice(common),
    unmatchedAfter: restAfter.slice(common),
  };
}

function sortChanges(changes: FindingChange[]): FindingChange[] {
  return changes.sort(
    (a, b) =>
      SEVERITY_ORDER[b.finding.severity] - SEVERITY_ORDER[a.finding.severity] ||
      a.path.localeCompare(b.path) ||
      a.finding.line - b.finding.line ||
      a.finding.column - b.finding.column ||
      a.finding.rule.localeCompare(b.finding.rule),
  );
}

function specShift(before: JsonFile | undefined, after: JsonFile | undefined): SpecShift {
  const a = before?.analysis?.start;
  const b = after?.analysis?.start;
  const shift: SpecShift = {
    path: (after ?? before)!.path,
    status: !before ? 'added' : !after ? 'removed' : 'unchanged',
    optimal: { before: a?.optimal, after: b?.optimal },
    random: { before: a?.random, after: b?.random },
    goalOptimal: { before: probability(a?.reach.optimal.goal), after: probability(b?.reach.optimal.goal) },
    goalRandom: { before: probability(a?.reach.random.goal), after: probability(b?.reach.random.goal) },
    magnitude: 0,
  };
  if (shift.status !== 'unchanged') {
    shift.magnitude = Infinity;
    return shift;
  }
  const magnitudes = [
    intervalShift(shift.optimal),
    intervalShift(shift.random),
    probabilityShift(shift.goalOptimal),
    probabilityShift(shift.goalRandom),
  ];
  shift.magnitude = Math.max(...magnitudes);
  if (shift.magnitude > 0) shift.status = 'changed';
  return shift;
}

/**
 * How far a start value moved, relative to its size (at least 1). Overlapping intervals count as
 * no move: each is a sound bound, so the true values may be equal. Appearing or vanishing (the
 * spec stopped or started compiling) and finite/infinite changes count as infinitely far.
 */
function intervalShift(shift: ValueShift<JsonInterval>): number {
  const { before, after } = shift;
  if (!before && !after) return 0;
  if (!before || !after) return Infinity;
  const [l0, u0, l1, u1] = [before.lower, before.upper, after.lower, after.upper].map(parseJsonNumber);
  if (l1 <= u0 && l0 <= u1) return 0;
  const m0 = midpoint(l0, u0);
  const m1 = midpoint(l1, u1);
  if (!Number.isFinite(m0) || !Number.isFinite(m1)) return Infinity;
  return Math.abs(m1 - m0) / Math.max(1, Math.abs(m0));
}

/** Probabilities are printed rounded to 10 digits: a smaller difference is no change. */
/** A JSON probability read back; an "undetermined" one is NaN. */
function probability(value: JsonProbability | undefined): number | undefined {
  return value === undefined ? undefined : parseJsonProbability(value);
}

function probabilityShift(shift: ValueShift<number>): number {
  const { before, after } = shift;
  if (before === undefined && after === undefined) return 0;
  if (before === undefined || after === undefined) return Infinity;
  // Becoming known or undetermined is a move; staying undetermined is none.
  if (Number.isNaN(before) || Number.isNaN(after)) return Number.isNaN(before) && Number.isNaN(after) ? 0 : Infinity;
  const d = Math.abs(after - before);
  return d > 1e-9 ? d : 0;
}

export function midpoint(lower: number, upper: number): number {
  if (lower === upper) return lower;
  return lower + (upper - lower) / 2;
}
