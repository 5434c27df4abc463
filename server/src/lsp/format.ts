/** Compact number formatting for hovers, lenses and status lines. */

/** A value with about four significant digits; infinities as ∞. The minus is ASCII, so that a copied number pastes into code. */
export function formatNumber(x: number): string {
  if (Number.isNaN(x)) return 'undetermined';
  if (x === Infinity) return '∞';
  if (x === -Infinity) return '-∞';
  if (x === 0) return '0';
  const magnitude = Math.abs(x);
  if (magnitude >= 1e4 && magnitude < 1e9) return String(Math.round(x));
  if (magnitude >= 1e9 || magnitude < 1e-3) return x.toExponential(2).replace('e+', 'e');
  return String(Number(x.toPrecision(4)));
}

/**
 * A sound interval [lower, upper]: one number when the interval is narrower than the digits shown
 * (the simplest decimal inside it, so [0, 9.98e-7] reads 0), else both ends.
 */
export function formatInterval(lower: number, upper: number): string {
  if (lower === upper) return formatNumber(lower);
  if (!Number.isFinite(lower) || !Number.isFinite(upper)) return `[${formatNumber(lower)}, ${formatNumber(upper)}]`;
  const width = upper - lower;
  if (width > 1e-4 * Math.max(Math.abs(lower), Math.abs(upper), 1))
    return `[${formatNumber(lower)}, ${formatNumber(upper)}]`;
  const mid = (lower + upper) / 2;
  for (let decade = Math.ceil(Math.log10(Math.max(Math.abs(mid), width, 1e-300))); decade >= -15; decade--) {
    const step = 10 ** decade;
    const candidate = Math.round(mid / step) * step;
    if (candidate >= lower && candidate <= upper) return formatNumber(candidate);
  }
  return formatNumber(mid);
}

/** A probability from the analysis, with differences below its precision read as none. */
export function snapProbability(p: number, precision: number): number {
  const tolerance = Math.max(precision, 1e-12);
  if (p < tolerance) return 0;
  if (p > 1 - tolerance) return 1;
  return p;
}

/**
 * A probability as a percentage, never rounding a non-zero value to 0% or a value below 1 to 100%;
 * differences from 0 or 1 below the analysis' precision count as none.
 */
export function formatProbability(probability: number, precision = 0): string {
  if (!Number.isFinite(probability)) return '?';
  const p = snapProbability(probability, precision);
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
