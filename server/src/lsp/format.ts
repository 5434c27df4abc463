/** Compact number formatting for hovers, lenses and status lines. */

/** A value with about four significant digits; infinities as ∞, minus signs as the typographic one. */
export function formatNumber(x: number): string {
  if (Number.isNaN(x)) return '?';
  if (x === Infinity) return '∞';
  if (x === -Infinity) return '−∞';
  if (x === 0) return '0';
  const magnitude = Math.abs(x);
  let text: string;
  if (magnitude >= 1e4 && magnitude < 1e9) text = String(Math.round(x));
  else if (magnitude >= 1e9 || magnitude < 1e-3) text = x.toExponential(2).replace('e+', 'e');
  else text = String(Number(x.toPrecision(4)));
  return text.replace('-', '−');
}

/**
 * A sound interval [lower, upper]: one number when both ends print the same, else the midpoint
 * with its half-width, else both ends.
 */
export function formatInterval(lower: number, upper: number): string {
  const low = formatNumber(lower);
  const high = formatNumber(upper);
  if (lower === upper || low === high) {
    if (lower === upper || !Number.isFinite(lower) || !Number.isFinite(upper)) return low;
    return `${formatNumber((lower + upper) / 2)} ± ${formatNumber((upper - lower) / 2)}`;
  }
  return `[${low}, ${high}]`;
}

/** A probability as a percentage, never rounding a non-zero value to 0% or a value below 1 to 100%. */
export function formatProbability(p: number): string {
  if (!Number.isFinite(p)) return '?';
  if (p <= 0) return '0%';
  if (p >= 1) return '100%';
  if (p < 0.001) return '<0.1%';
  if (p > 0.999) return '>99.9%';
  const percent = p * 100;
  return `${Number(percent.toFixed(percent >= 10 ? 0 : 1))}%`;
}

export function formatDuration(ms: number): string {
  if (ms < 1000) return `${Math.round(ms)} ms`;
  return `${(ms / 1000).toFixed(ms < 10_000 ? 2 : 1)} s`;
}

export function plural(count: number, noun: string): string {
  return `${count.toLocaleString('en-US')} ${noun}${count === 1 ? '' : 's'}`;
}

/** Escapes text for use inside markdown inline code. */
export function code(text: string): string {
  const clean = text.replace(/[\r\n]+/g, ' ');
  const fence = clean.includes('`') ? '``' : '`';
  return `${fence}${clean.length > 60 ? `${clean.slice(0, 57)}…` : clean}${fence}`;
}
