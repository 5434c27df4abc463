/**
 * Reads a value interval as the hover prints it: one number ("3.286"), a midpoint with its
 * half-width ("3.286 ± 0.002"), or both ends ("[1.2, 1.3]"); infinities as ∞ and minus signs as −.
 * `tolerance` is half a unit of the last printed digit, what rounding for display can hide.
 */
export interface ShownInterval {
  lower: number;
  upper: number;
  tolerance: number;
}

export function shownInterval(text: string): ShownInterval {
  const clean = text.replace(/−/g, '-').replace(/∞/g, 'Infinity').trim();
  const both = /^\[(\S+), (\S+)\]$/.exec(clean);
  if (both) {
    const [lower, upper] = [parseShown(both[1]), parseShown(both[2])];
    return { lower: lower.value, upper: upper.value, tolerance: Math.max(lower.tolerance, upper.tolerance) };
  }
  const plusMinus = /^(\S+) ± (\S+)$/.exec(clean);
  if (plusMinus) {
    const [mid, half] = [parseShown(plusMinus[1]), parseShown(plusMinus[2])];
    return { lower: mid.value - half.value, upper: mid.value + half.value, tolerance: mid.tolerance + half.tolerance };
  }
  const single = parseShown(clean);
  return { lower: single.value, upper: single.value, tolerance: single.tolerance };
}

function parseShown(text: string): { value: number; tolerance: number } {
  const value = Number(text);
  if (Number.isNaN(value)) throw new Error(`Not a number as the hover prints one: ${JSON.stringify(text)}`);
  if (!Number.isFinite(value)) return { value, tolerance: 0 };
  const match = /^-?\d*(?:\.(\d+))?(?:e([-+]?\d+))?$/i.exec(text);
  if (!match) throw new Error(`Unexpected number format: ${JSON.stringify(text)}`);
  const decimals = match[1]?.length ?? 0;
  const exponent = Number(match[2] ?? 0);
  return { value, tolerance: 0.5 * 10 ** (exponent - decimals) };
}
