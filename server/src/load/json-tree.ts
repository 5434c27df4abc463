/**
 * A JSON document as a compact tree: one row per node in typed arrays (kind, start, end, first
 * child, next sibling, number value) and a list of string values, instead of one object per node.
 *
 * A 9 MB spec (40,000 transitions) has about two million nodes. As objects (jsonc-parser's `Node`)
 * they took 1.3 s to build, most of it in the garbage collector, whichever parser built them; as
 * rows they take a fraction of that. Short strings are interned, so the thousands of repeated keys
 * ("state", "probability") and state ids share one string each.
 *
 * `readJsonTree` reads well-formed JSON with comments and trailing commas, a subset of what
 * jsonc-parser reads without errors, with the same offsets; on anything else (a syntax error, an
 * unusual blank, nesting deeper than allowed) it returns undefined, and the caller reads the text
 * with jsonc-parser for its error recovery and messages and converts that tree with
 * `jsonTreeFromNodes`. test/load/json-tree.test.ts checks that both give the same tree.
 */
import type { Node } from 'jsonc-parser';
import type { Span } from './span';

export const enum NodeKind {
  Object = 1,
  Array = 2,
  Property = 3,
  String = 4,
  Number = 5,
  Boolean = 6,
  Null = 7,
}

/** No node: the first child of a leaf, the next sibling of a last child. */
export const NONE = -1;

export class JsonTree {
  /** Node count; node 0 is the root. */
  size = 0;
  kinds: Uint8Array;
  starts: Int32Array;
  ends: Int32Array;
  firstChildren: Int32Array;
  nextSiblings: Int32Array;
  parents: Int32Array;
  /** The value of number nodes; 1 or 0 for booleans; for string nodes, the index in `strings`. */
  numbers: Float64Array;
  /** The values of string nodes (keys included); nodes with equal short strings may share an entry. */
  private readonly strings: string[] = [];

  constructor(capacity: number) {
    const n = Math.max(16, capacity);
    this.kinds = new Uint8Array(n);
    this.starts = new Int32Array(n);
    this.ends = new Int32Array(n);
    this.firstChildren = new Int32Array(n);
    this.nextSiblings = new Int32Array(n);
    this.parents = new Int32Array(n);
    this.numbers = new Float64Array(n);
  }

  /** Appends a node; the caller links it to its parent. */
  add(kind: NodeKind, start: number, parent: number): number {
    if (this.size === this.kinds.length) this.grow();
    const id = this.size++;
    this.kinds[id] = kind;
    this.starts[id] = start;
    this.ends[id] = start;
    this.firstChildren[id] = NONE;
    this.nextSiblings[id] = NONE;
    this.parents[id] = parent;
    return id;
  }

  /** Gives a string node its value. */
  setString(node: number, value: string): void {
    this.setStringIndex(node, this.addString(value));
  }

  /** Gives a string node the value an earlier node has (`index` from addString or stringIndex): no new entry. */
  setStringIndex(node: number, index: number): void {
    this.numbers[node] = index;
  }

  /** Adds a string value without a node yet; returns its index for setStringIndex. */
  addString(value: string): number {
    this.strings.push(value);
    return this.strings.length - 1;
  }

  /** The value of a string node (a key or a string value); only for string nodes. */
  str(node: number): string {
    return this.strings[this.numbers[node]];
  }

  span(node: number): Span {
    return { start: this.starts[node], end: this.ends[node] };
  }

  /** The string value of a string node, else undefined. */
  stringOf(node: number): string | undefined {
    return node >= 0 && this.kinds[node] === NodeKind.String ? this.strings[this.numbers[node]] : undefined;
  }

  /** The children of an object (its properties) or of an array (its items). */
  children(node: number): number[] {
    const out: number[] = [];
    for (let child = this.firstChildren[node]; child !== NONE; child = this.nextSiblings[child]) out.push(child);
    return out;
  }

  /** The key node of a property. */
  keyOf(property: number): number {
    return this.firstChildren[property];
  }

  /** The value node of a property, NONE when the property has no value (a syntax error). */
  valueOf(property: number): number {
    const key = this.firstChildren[property];
    return key === NONE ? NONE : this.nextSiblings[key];
  }

  /** The value of the last property of `object` named `name` (the one JSON.parse keeps), else NONE. */
  member(object: number, name: string): number {
    if (object < 0 || this.kinds[object] !== NodeKind.Object) return NONE;
    let found = NONE;
    for (let property = this.firstChildren[object]; property !== NONE; property = this.nextSiblings[property]) {
      const key = this.firstChildren[property];
      if (key !== NONE && this.str(key) === name) {
        const value = this.nextSiblings[key];
        if (value !== NONE) found = value;
      }
    }
    return found;
  }

  /** The document as a plain value, as JSON.parse would give it (the last of repeated keys wins). */
  toValue(node = 0): unknown {
    switch (this.kinds[node]) {
      case NodeKind.Object: {
        const value: Record<string, unknown> = {};
        for (let property = this.firstChildren[node]; property !== NONE; property = this.nextSiblings[property]) {
          const key = this.firstChildren[property];
          const inner = key === NONE ? NONE : this.nextSiblings[key];
          if (inner === NONE) continue;
          // A "__proto__" key is an own property, as JSON.parse makes it.
          Object.defineProperty(value, this.str(key), {
            value: this.toValue(inner),
            enumerable: true,
            writable: true,
            configurable: true,
          });
        }
        return value;
      }
      case NodeKind.Array: {
        const items: unknown[] = [];
        for (let item = this.firstChildren[node]; item !== NONE; item = this.nextSiblings[item])
          items.push(this.toValue(item));
        return items;
      }
      case NodeKind.String:
        return this.str(node);
      case NodeKind.Number:
        return this.numbers[node];
      case NodeKind.Boolean:
        return this.numbers[node] === 1;
      default:
        return null;
    }
  }

  private grow(): void {
    const n = this.kinds.length * 2;
    const grown = <T extends Uint8Array | Int32Array | Float64Array>(old: T, make: (n: number) => T): T => {
      const next = make(n);
      next.set(old);
      return next;
    };
    this.kinds = grown(this.kinds, (k) => new Uint8Array(k));
    this.starts = grown(this.starts, (k) => new Int32Array(k));
    this.ends = grown(this.ends, (k) => new Int32Array(k));
    this.firstChildren = grown(this.firstChildren, (k) => new Int32Array(k));
    this.nextSiblings = grown(this.nextSiblings, (k) => new Int32Array(k));
    this.parents = grown(this.parents, (k) => new Int32Array(k));
    this.numbers = grown(this.numbers, (k) => new Float64Array(k));
  }
}

// ---------------------------------------------------------------------------------------------
// Reading text

const QUOTE = 34;
const BACKSLASH = 92;
const SLASH = 47;
const STAR = 42;
const COMMA = 44;
const COLON = 58;
const OPEN_BRACE = 123;
const CLOSE_BRACE = 125;
const OPEN_BRACKET = 91;
const CLOSE_BRACKET = 93;
const MINUS = 45;
const PLUS = 43;
const DOT = 46;
const DIGIT_0 = 48;
const DIGIT_9 = 57;

/** Thrown inside the reader to give the text to jsonc-parser; never escapes `readJsonTree`. */
const GIVE_UP = new (class NotPlainJson {})();

/** Strings up to this length are interned. */
const INTERN_MAX_LENGTH = 32;
const INTERN_SLOTS = 1 << 16;
const NUMBER_SLOTS = 1 << 12;

/** The compact tree of `text`, or undefined when jsonc-parser should read it (see the module comment). */
export function readJsonTree(text: string, maxDepth: number): JsonTree | undefined {
  try {
    return new TextReader(text, maxDepth).document();
  } catch (error) {
    if (error === GIVE_UP) return undefined;
    throw error;
  }
}

/**
 * At least the number of nodes of a plain JSON text, so the tree's arrays never grow (growing
 * copies them all): a property is two nodes and has a colon, every other value but the first
 * follows a comma or an opening bracket. Separators inside strings only make the bound looser.
 */
function nodeCountBound(text: string): number {
  let count = 1;
  for (let i = 0; i < text.length; i++) {
    const ch = text.charCodeAt(i);
    if (ch === COLON) count += 2;
    else if (ch === COMMA || ch === OPEN_BRACE || ch === OPEN_BRACKET) count += 1;
  }
  return count;
}

class TextReader {
  private at = 0;
  private readonly tree: JsonTree;
  private readonly interned: Array<string | undefined> = new Array<string | undefined>(INTERN_SLOTS).fill(undefined);
  /** The tree's string index of each interned string. */
  private readonly internedIndex = new Int32Array(INTERN_SLOTS);
  /** Number texts seen and their values, by a hash of the text (a spec repeats a few numbers). */
  private readonly numberTexts: Array<string | undefined> = new Array<string | undefined>(NUMBER_SLOTS).fill(undefined);
  private readonly numberValues = new Float64Array(NUMBER_SLOTS);

  constructor(
    private readonly text: string,
    private readonly maxDepth: number,
  ) {
    this.tree = new JsonTree(nodeCountBound(text));
  }

  document(): JsonTree {
    this.skipBlanks();
    if (this.at >= this.text.length) throw GIVE_UP;
    this.value(NONE, 0);
    this.skipBlanks();
    if (this.at !== this.text.length) throw GIVE_UP;
    return this.tree;
  }

  private skipBlanks(): void {
    const text = this.text;
    const n = text.length;
    let i = this.at;
    while (i < n) {
      const ch = text.charCodeAt(i);
      if (ch === 32 || ch === 10 || ch === 13 || ch === 9) {
        i++;
      } else if (ch === SLASH) {
        const next = text.charCodeAt(i + 1);
        if (next === SLASH) {
          i += 2;
          while (i < n) {
            const c = text.charCodeAt(i);
            if (c === 10 || c === 13) break;
            // jsonc-parser also ends a line comment at these; leave such text to it.
            if (c === 0x2028 || c === 0x2029) throw GIVE_UP;
            i++;
          }
        } else if (next === STAR) {
          const end = text.indexOf('*/', i + 2);
          if (end < 0) throw GIVE_UP;
          i = end + 2;
        } else {
          throw GIVE_UP;
        }
      } else {
        break;
      }
    }
    this.at = i;
  }

  /** Reads the value at `at` as a child of `parent`; returns its node. */
  private value(parent: number, depth: number): number {
    const ch = this.text.charCodeAt(this.at);
    if (ch === OPEN_BRACE || ch === OPEN_BRACKET) return this.container(parent, depth + 1, ch === OPEN_BRACE);
    if (ch === QUOTE) return this.stringNode(parent);
    if (ch === MINUS || (ch >= DIGIT_0 && ch <= DIGIT_9)) return this.number(parent);
    return this.literal(parent);
  }

  private container(parent: number, depth: number, isObject: boolean): number {
    if (depth > this.maxDepth) throw GIVE_UP;
    const text = this.text;
    const tree = this.tree;
    const node = tree.add(isObject ? NodeKind.Object : NodeKind.Array, this.at, parent);
    const close = isObject ? CLOSE_BRACE : CLOSE_BRACKET;
    let last = NONE;
    this.at++;
    this.skipBlanks();
    while (text.charCodeAt(this.at) !== close) {
      let child: number;
      if (isObject) {
        if (text.charCodeAt(this.at) !== QUOTE) throw GIVE_UP;
        child = tree.add(NodeKind.Property, this.at, node);
        const key = this.stringNode(child);
        tree.firstChildren[child] = key;
        this.skipBlanks();
        if (text.charCodeAt(this.at) !== COLON) throw GIVE_UP;
        this.at++;
        this.skipBlanks();
        const value = this.value(child, depth);
        tree.nextSiblings[key] = value;
        tree.ends[child] = tree.ends[value];
      } else {
        if (this.at >= text.length) throw GIVE_UP;
        child = this.value(node, depth);
      }
      if (last === NONE) tree.firstChildren[node] = child;
      else tree.nextSiblings[last] = child;
      last = child;
      this.skipBlanks();
      const next = text.charCodeAt(this.at);
      if (next === COMMA) {
        this.at++;
        this.skipBlanks();
      } else if (next !== close) {
        throw GIVE_UP;
      }
    }
    this.at++;
    tree.ends[node] = this.at;
    return node;
  }

  /** A string node at `at` (on its opening quote); leaves `at` after the closing quote. */
  private stringNode(parent: number): number {
    const text = this.text;
    const n = text.length;
    const start = this.at;
    let i = start + 1;
    let hash = 0;
    let value: string | undefined;
    while (i < n) {
      const ch = text.charCodeAt(i);
      if (ch === QUOTE) break;
      if (ch === BACKSLASH) {
        i = this.endOfEscapedString(i);
        value = JSON.parse(text.slice(start, i + 1)) as string;
        break;
      }
      if (ch < 0x20) throw GIVE_UP;
      hash = (Math.imul(hash, 31) + ch) | 0;
      i++;
    }
    if (i >= n) throw GIVE_UP;
    const index = value === undefined ? this.intern(start + 1, i, hash) : this.tree.addString(value);
    this.at = i + 1;
    const node = this.tree.add(NodeKind.String, start, parent);
    this.tree.ends[node] = this.at;
    this.tree.setStringIndex(node, index);
    return node;
  }

  /**
   * The tree's string index of the text between `start` and `end`: an equal short string seen
   * before shares its entry, so the thousands of repeated keys and state ids take one entry each
   * (a list of a million entries costs its growth and every garbage collection a scan).
   */
  private intern(start: number, end: number, hash: number): number {
    const length = end - start;
    if (length > INTERN_MAX_LENGTH) return this.tree.addString(this.text.slice(start, end));
    const slot = (hash ^ (length << 7)) & (INTERN_SLOTS - 1);
    const known = this.interned[slot];
    if (known !== undefined && known.length === length && this.text.startsWith(known, start))
      return this.internedIndex[slot];
    const value = this.text.slice(start, end);
    const index = this.tree.addString(value);
    this.interned[slot] = value;
    this.internedIndex[slot] = index;
    return index;
  }

  /** From a backslash inside a string, the offset of the closing quote; checks every escape. */
  private endOfEscapedString(i: number): number {
    const text = this.text;
    const n = text.length;
    while (i < n) {
      const ch = text.charCodeAt(i);
      if (ch === QUOTE) return i;
      if (ch < 0x20) throw GIVE_UP;
      if (ch === BACKSLASH) {
        const next = text.charCodeAt(i + 1);
        if (next === 117) {
          // \u and exactly four hex digits.
          for (let k = i + 2; k < i + 6; k++) if (!isHexDigit(text.charCodeAt(k))) throw GIVE_UP;
          i += 6;
          continue;
        }
        // The other escapes: \" \\ \/ \b \f \n \r \t.
        if (
          next !== QUOTE &&
          next !== BACKSLASH &&
          next !== SLASH &&
          next !== 98 &&
          next !== 102 &&
          next !== 110 &&
          next !== 114 &&
          next !== 116
        )
          throw GIVE_UP;
        i += 2;
        continue;
      }
      i++;
    }
    throw GIVE_UP;
  }

  /** A number in JSON's grammar, followed by a delimiter. */
  private number(parent: number): number {
    const text = this.text;
    const start = this.at;
    let i = start;
    if (text.charCodeAt(i) === MINUS) i++;
    let ch = text.charCodeAt(i);
    if (ch === DIGIT_0) i++;
    else if (ch > DIGIT_0 && ch <= DIGIT_9) while (isDigit(text.charCodeAt(i))) i++;
    else throw GIVE_UP;
    if (text.charCodeAt(i) === DOT) {
      i++;
      if (!isDigit(text.charCodeAt(i))) throw GIVE_UP;
      while (isDigit(text.charCodeAt(i))) i++;
    }
    ch = text.charCodeAt(i);
    if (ch === 101 || ch === 69) {
      i++;
      ch = text.charCodeAt(i);
      if (ch === PLUS || ch === MINUS) i++;
      if (!isDigit(text.charCodeAt(i))) throw GIVE_UP;
      while (isDigit(text.charCodeAt(i))) i++;
    }
    this.expectDelimiter(i);
    this.at = i;
    const node = this.tree.add(NodeKind.Number, start, parent);
    this.tree.ends[node] = i;
    this.tree.numbers[node] = this.numberValue(start, i);
    return node;
  }

  /** The value of the number text between `start` and `end`; repeated texts are parsed once. */
  private numberValue(start: number, end: number): number {
    const text = this.text;
    const length = end - start;
    const slot =
      (length * 977 +
        text.charCodeAt(start) * 131 +
        text.charCodeAt(end - 1) * 31 +
        text.charCodeAt(start + (length >> 1))) &
      (NUMBER_SLOTS - 1);
    const known = this.numberTexts[slot];
    if (known !== undefined && known.length === length && text.startsWith(known, start)) return this.numberValues[slot];
    const written = text.slice(start, end);
    const value = Number(written);
    this.numberTexts[slot] = written;
    this.numberValues[slot] = value;
    return value;
  }

  private literal(parent: number): number {
    const text = this.text;
    const start = this.at;
    let kind: NodeKind;
    let value = 0;
    let length: number;
    if (text.startsWith('true', start)) {
      kind = NodeKind.Boolean;
      value = 1;
      length = 4;
    } else if (text.startsWith('false', start)) {
      kind = NodeKind.Boolean;
      length = 5;
    } else if (text.startsWith('null', start)) {
      kind = NodeKind.Null;
      length = 4;
    } else {
      throw GIVE_UP;
    }
    this.expectDelimiter(start + length);
    this.at = start + length;
    const node = this.tree.add(kind, start, parent);
    this.tree.ends[node] = this.at;
    this.tree.numbers[node] = value;
    return node;
  }

  /** A number or literal ends at a blank, a separator, a closing bracket, a comment or the end. */
  private expectDelimiter(i: number): void {
    if (i >= this.text.length) return;
    const ch = this.text.charCodeAt(i);
    if (
      ch === 32 ||
      ch === 10 ||
      ch === 13 ||
      ch === 9 ||
      ch === COMMA ||
      ch === CLOSE_BRACE ||
      ch === CLOSE_BRACKET ||
      ch === SLASH
    )
      return;
    throw GIVE_UP;
  }
}

function isDigit(ch: number): boolean {
  return ch >= DIGIT_0 && ch <= DIGIT_9;
}

function isHexDigit(ch: number): boolean {
  return (ch >= DIGIT_0 && ch <= DIGIT_9) || (ch >= 65 && ch <= 70) || (ch >= 97 && ch <= 102);
}

// ---------------------------------------------------------------------------------------------
// Converting jsonc-parser's tree

const KIND_OF_TYPE: Record<Node['type'], NodeKind> = {
  object: NodeKind.Object,
  array: NodeKind.Array,
  property: NodeKind.Property,
  string: NodeKind.String,
  number: NodeKind.Number,
  boolean: NodeKind.Boolean,
  null: NodeKind.Null,
};

/** The compact form of a jsonc-parser tree (used for documents with syntax errors). */
export function jsonTreeFromNodes(root: Node): JsonTree {
  const tree = new JsonTree(64);
  const visit = (node: Node, parent: number): number => {
    const id = tree.add(KIND_OF_TYPE[node.type], node.offset, parent);
    tree.ends[id] = node.offset + node.length;
    if (node.type === 'string') tree.setString(id, String(node.value));
    else if (node.type === 'number') tree.numbers[id] = Number(node.value);
    else if (node.type === 'boolean') tree.numbers[id] = node.value === true ? 1 : 0;
    let last = NONE;
    for (const child of node.children ?? []) {
      const childId = visit(child, id);
      if (last === NONE) tree.firstChildren[id] = childId;
      else tree.nextSiblings[last] = childId;
      last = childId;
    }
    return id;
  };
  visit(root, NONE);
  return tree;
}
