/**
 * The compact JSON reader against jsonc-parser, the reference it stands in for: on every text it
 * accepts, jsonc-parser must read the text without errors and give the same tree (kinds, offsets,
 * lengths, values, order), and the plain value must equal JSON.parse's where the text is strict
 * JSON. On texts it declines, the loader reads them with jsonc-parser, so the loaded spec must not
 * depend on which path read it.
 */
import { readdirSync, readFileSync, statSync } from 'node:fs';
import { join } from 'node:path';
import fc from 'fast-check';
import { parseTree, type ParseError } from 'jsonc-parser';
import { describe, expect, it } from 'vitest';
import { parseJsonSpec } from '../../server/src/load/json';
import { JsonTree, NONE, jsonTreeFromNodes, readJsonTree } from '../../server/src/load/json-tree';

const JSONC_OPTIONS = { allowTrailingComma: true, disallowComments: false, allowEmptyContent: false };
const DEPTH = 64;

function jsonFiles(dir: string): string[] {
  const out: string[] = [];
  for (const name of readdirSync(dir)) {
    const path = join(dir, name);
    if (statSync(path).isDirectory()) out.push(...jsonFiles(path));
    else if (name.endsWith('.json')) out.push(path);
  }
  return out;
}

const ROOT = join(__dirname, '..', '..');
const FILES = [...jsonFiles(join(ROOT, 'examples')), ...jsonFiles(join(ROOT, 'test', 'fixtures'))];

/** Every row of the tree as a readable record, so a mismatch names the node. */
function rows(tree: JsonTree): string[] {
  const out: string[] = [];
  const visit = (node: number, depth: number): void => {
    const value =
      tree.kinds[node] === 4
        ? JSON.stringify(tree.str(node))
        : tree.kinds[node] === 5 || tree.kinds[node] === 6
          ? String(tree.numbers[node])
          : '';
    out.push(`${depth} kind=${tree.kinds[node]} ${tree.starts[node]}-${tree.ends[node]} ${value}`);
    for (let child = tree.firstChildren[node]; child !== NONE; child = tree.nextSiblings[child]) {
      expect(tree.parents[child]).toBe(node);
      visit(child, depth + 1);
    }
  };
  visit(0, 0);
  return out;
}

/** jsonc-parser's reading of `text`, with its error count. */
function reference(text: string): { tree: JsonTree | undefined; errors: number } {
  const errors: ParseError[] = [];
  const root = parseTree(text, errors, JSONC_OPTIONS);
  return { tree: root === undefined ? undefined : jsonTreeFromNodes(root), errors: errors.length };
}

function expectSameAsReference(text: string): void {
  const fast = readJsonTree(text, DEPTH);
  const ref = reference(text);
  if (fast === undefined) return;
  expect(ref.errors).toBe(0);
  expect(rows(fast)).toEqual(rows(ref.tree!));
}

describe('readJsonTree against jsonc-parser', () => {
  it('reads every example and fixture, giving jsonc-parser’s tree and JSON.parse’s value', () => {
    expect(FILES.length).toBeGreaterThan(10);
    for (const file of FILES) {
      const text = readFileSync(file, 'utf8');
      const fast = readJsonTree(text, DEPTH);
      const ref = reference(text);
      if (ref.errors > 0) {
        expect(fast, file).toBeUndefined();
        continue;
      }
      expect(fast, file).toBeDefined();
      expect(rows(fast!), file).toEqual(rows(ref.tree!));
      let strict: unknown;
      try {
        strict = JSON.parse(text);
      } catch {
        continue; // Comments or trailing commas: JSON.parse has no opinion.
      }
      expect(fast!.toValue(), file).toEqual(strict);
    }
  });

  it('gives the same tree on random documents laid out with random blanks, comments and trailing commas', () => {
    const blank = fc.constantFrom('', ' ', '\n', '\t', '\r\n', '  ', ' /* c */ ', '// line\n', '/**/');
    const layout = (value: unknown, pick: () => string, comma: () => boolean): string => {
      if (Array.isArray(value))
        return `[${pick()}${value.map((item) => layout(item, pick, comma)).join(`${pick()},${pick()}`)}${value.length > 0 && comma() ? ',' : ''}${pick()}]`;
      if (value !== null && typeof value === 'object') {
        const entries = Object.entries(value);
        return `{${pick()}${entries
          .map(([key, inner]) => `${JSON.stringify(key)}${pick()}:${pick()}${layout(inner, pick, comma)}`)
          .join(`${pick()},${pick()}`)}${entries.length > 0 && comma() ? ',' : ''}${pick()}}`;
      }
      return JSON.stringify(value);
    };
    fc.assert(
      fc.property(
        fc.jsonValue({ maxDepth: 5 }),
        fc.infiniteStream(blank),
        fc.infiniteStream(fc.boolean()),
        (value, blanks, commas) => {
          const text = layout(
            value,
            () => blanks.next().value,
            () => commas.next().value,
          );
          const fast = readJsonTree(text, DEPTH);
          expect(fast, text).toBeDefined();
          expectSameAsReference(text);
          // -0 and 0 are one number to JSON; compare through JSON text.
          expect(JSON.stringify(fast!.toValue())).toBe(JSON.stringify(JSON.parse(JSON.stringify(value))));
        },
      ),
      { numRuns: 300 },
    );
  });

  it('accepts a mutated text only when jsonc-parser reads it without errors, and then agrees with it', () => {
    const pieces = [
      '{',
      '}',
      '[',
      ']',
      ',',
      ':',
      '"',
      '\\',
      '/',
      '*',
      '-',
      '0',
      '1e',
      '.',
      ' ',
      '\u00a0',
      '\u2028',
      'tru',
      'null',
      'x',
      '"\\u00',
      '\n',
    ];
    fc.assert(
      fc.property(
        fc.jsonValue({ maxDepth: 4 }),
        fc.array(fc.tuple(fc.nat(), fc.nat(3), fc.constantFrom(...pieces)), { minLength: 1, maxLength: 4 }),
        (value, edits) => {
          let text = JSON.stringify(value, null, 1);
          for (const [at, cut, piece] of edits) {
            const offset = at % (text.length + 1);
            text = text.slice(0, offset) + piece + text.slice(offset + cut);
          }
          expectSameAsReference(text);
        },
      ),
      { numRuns: 1000 },
    );
  });

  it('declines what it does not read itself: syntax errors, deep nesting, unusual blanks', () => {
    for (const text of [
      '{"a": }',
      '[1 2]',
      '{"a": 1',
      `${'['.repeat(70)}${']'.repeat(70)}`,
      '{\u00a0"a": 1}',
      '// x\u2028\n{}',
      '',
      '01',
      '"\t"',
    ])
      expect(readJsonTree(text, DEPTH), JSON.stringify(text)).toBeUndefined();
  });

  it('keeps "__proto__" as an own key, as JSON.parse does', () => {
    const text = '{"__proto__": {"polluted": 1}, "a": [true, false, null]}';
    const value = readJsonTree(text, DEPTH)!.toValue() as Record<string, unknown>;
    expect(value).toEqual(JSON.parse(text));
    expect(Object.getPrototypeOf(value)).toBe(Object.prototype);
    expect(({} as Record<string, unknown>).polluted).toBeUndefined();
  });
});

describe('parseJsonSpec does not depend on which reader read the text', () => {
  it('loads every example and fixture the same way through the jsonc-parser path', () => {
    for (const file of FILES) {
      const text = readFileSync(file, 'utf8');
      // The compact reader declines comments, so a trailing comment sends this text down the
      // jsonc-parser path; the spans are the same since the comment comes after the document.
      expect(parseJsonSpec(`${text}\n// a trailing note\n`), file).toEqual(parseJsonSpec(text));
    }
  });
});
