/**
 * Rounding of bounds for output. A lower bound is only ever rounded down and an upper bound only
 * up, so a printed interval still contains the true value (as the double the reader parses back).
 */

/** Significant digits of the numbers in the JSON output. */
export const JSON_DIGITS = 10;
/** Significant digits of the numbers in the text output (a person reads them). */
export const TEXT_DIGITS = 6;

/** The largest double with at most `digits` significant decimal digits that is <= x. */
export function roundDown(x: number, digits: number = JSON_DIGITS): number {
  if (!Number.isFinite(x) || x === 0) return x === 0 ? 0 : x;
  let r = Number(x.toPrecision(digits));
  if (r <= x) return r === 0 ? 0 : r;
  // toPrecision rounded to nearest and went up: step one unit in the last kept digit down.
  const unit = 10 ** (Math.floor(Math.log10(Math.abs(x))) - digits + 1);
  for (let tries = 0; tries < 4 && r > x; tries++) {
    r = Number((r - unit).toPrecision(digits));
  }
  // The loop cannot fail for finite x (one step suffices); keep x itself rather than an unsound value.
  return r <= x ? (r === 0 ? 0 : r) : x;
}

/** The smallest double with at most `digits` significant decimal digits that is >= x. */
export function roundUp(x: number, digits: number = JSON_DIGITS): number {
  const r = -roundDown(-x, digits);
  return r === 0 ? 0 : r;
}

/** Rounds to nearest (for point estimates such as probabilities, where no side is safer). */
export function roundNearest(x: number, digits: number = JSON_DIGITS): number {
  if (!Number.isFinite(x) || x === 0) return x === 0 ? 0 : x;
  const r = Number(x.toPrecision(digits));
  return r === 0 ? 0 : r;
}

/** A number for JSON, where Infinity cannot be written: "inf" / "-inf". */
export type JsonNumber = number | 'inf' | '-inf' | 'undetermined';

/**
 * A lower bound for JSON: rounded down; NaN becomes "-inf" (a bound that says nothing, but never
 * a false one).
 */
export function jsonLower(x: number): JsonNumber {
  if (Number.isNaN(x) || x === -Infinity) return '-inf';
  if (x === Infinity) return 'inf';
  return roundDown(x);
}

/** An upper bound for JSON: rounded up; NaN becomes "inf". */
export function jsonUpper(x: number): JsonNumber {
  if (Number.isNaN(x) || x === Infinity) return 'inf';
  if (x === -Infinity) return '-inf';
  return roundUp(x);
}

/** A probability for JSON, or "undetermined" when its solve stopped short of the precision. */
export type JsonProbability = number | 'undetermined';

/** A probability for JSON: rounded to nearest and kept within [0, 1]; NaN (not known) is "undetermined". */
export function jsonProbability(p: number): JsonProbability {
  if (Number.isNaN(p)) return 'undetermined';
  return Math.min(1, Math.max(0, roundNearest(p)));
}

/** A share of sampled episodes for JSON: always known once an episode ran, so always a number. */
export function jsonShare(p: number): number {
  return Number.isNaN(p) ? 0 : Math.min(1, Math.max(0, roundNearest(p)));
}

/** A point value for JSON that may be infinite (e.g. an expected episode length). */
export function jsonPoint(x: number): JsonNumber {
  if (Number.isNaN(x)) return 'undetermined';
  if (x === Infinity) return 'inf';
  if (x === -Infinity) return '-inf';
  return roundNearest(x);
}

/** Reads back a JSON probability: NaN when it is "undetermined". */
export function parseJsonProbability(value: JsonProbability): number {
  return value === 'undetermined' ? NaN : value;
}

/** Reads back a JSON bound written by jsonLower / jsonUpper / jsonPoint. */
export function parseJsonNumber(value: JsonNumber): number {
  if (value === 'inf') return Infinity;
  if (value === '-inf') return -Infinity;
  if (value === 'undetermined') return NaN;
  return value;
}

/**
 * A bound for people: rounded soundly to TEXT_DIGITS, without trailing zeros. Large values keep
 * every integer digit and one decimal, so an exact 4499999.999 never reads as "4499990 .. 4500000".
 */
export function textBound(x: number, side: 'lower' | 'upper'): string {
  if (Number.isNaN(x)) return side === 'lower' ? '-inf' : 'inf';
  if (x === Infinity) return 'inf';
  if (x === -Infinity) return '-inf';
  const integerDigits = x === 0 ? 1 : Math.floor(Math.log10(Math.abs(x))) + 1;
  const digits = Math.min(17, Math.max(TEXT_DIGITS, integerDigits + 1));
  return String(side === 'lower' ? roundDown(x, digits) : roundUp(x, digits));
}

/** An interval for people: one number when both sound roundings agree, else "lower .. upper". */
export function textInterval(lower: number, upper: number): string {
  const low = textBound(lower, 'lower');
  const high = textBound(upper, 'upper');
  return low === high ? low : `${low} .. ${high}`;
}

/** A probability for people: four decimals, with "<0.0001" and ">0.9999" so tiny non-zero values stay visible. */
export function textProbability(p: number | 'undetermined'): string {
  if (p === 'undetermined' || Number.isNaN(p)) return 'undetermined';
  if (p <= 0) return '0';
  if (p >= 1) return '1';
  if (p < 5e-5) return '<0.0001';
  if (p > 1 - 5e-5) return '>0.9999';
  return String(Number(p.toFixed(4)));
}
