import fc from 'fast-check';
import { describe, expect, test } from 'vitest';
import { canonicalKey } from '../../server/src/sandbox/runtime';

/** The same value with every object's keys in reverse order. */
function reversed(value: unknown): unknown {
  if (Array.isArray(value)) return value.map(reversed);
  if (value && typeof value === 'object') {
    // fromEntries defines own properties, so a key named __proto__ stays a key (assignment would drop it).
    return Object.fromEntries(
      Object.keys(value)
        .reverse()
        .map((key) => [key, reversed((value as Record<string, unknown>)[key])]),
    );
  }
  return value;
}

describe('canonical state keys (stable JSON with sorted keys)', () => {
  test('examples', () => {
    expect(canonicalKey({ stock: 3, day: 1 })).toBe('{"day":1,"stock":3}');
    expect(canonicalKey({ b: [{ y: 1, x: 2 }], a: null })).toBe('{"a":null,"b":[{"x":2,"y":1}]}');
    expect(canonicalKey('shelf')).toBe('"shelf"');
    expect(canonicalKey(-0)).toBe('0');
    expect(canonicalKey([1, 'a', true])).toBe('[1,"a",true]');
    // JSON leaves out undefined properties, and so does the key.
    expect(canonicalKey({ a: 1, gone: undefined })).toBe('{"a":1}');
    expect(canonicalKey(JSON.parse('{"__proto__": {"x": 1}, "a": 2}'))).toBe('{"__proto__":{"x":1},"a":2}');
  });

  test('values that are not plain JSON are refused with the path', () => {
    expect(() => canonicalKey({ a: { b: NaN } })).toThrow('state.a.b is NaN, not a finite number');
    expect(() => canonicalKey({ when: new Date(0) })).toThrow('state.when is a Date; states must be plain JSON values');
    expect(() => canonicalKey([1, () => 2])).toThrow('state[1] is a function');
    expect(() => canonicalKey(undefined)).toThrow('state is undefined');
    const cycle: Record<string, unknown> = {};
    cycle.self = cycle;
    expect(() => canonicalKey(cycle)).toThrow(/nested more than 64 levels deep/);
  });

  test('property: equal values give equal keys whatever the key order, and the key parses back to the value (JSON.parse)', () => {
    fc.assert(
      fc.property(fc.jsonValue(), (value) => {
        const key = canonicalKey(value);
        expect(canonicalKey(reversed(value))).toBe(key);
        expect(JSON.parse(key)).toEqual(JSON.parse(JSON.stringify(value)));
      }),
      { numRuns: 300 },
    );
  });
});
