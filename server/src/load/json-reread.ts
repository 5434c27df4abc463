/**
 * Re-reading a JSON document after an edit inside one value. The editor sends the whole text on
 * every change, and most changes of a large spec replace one number or string (a reward, a
 * probability, a state named in an outcome). Reading 9 MB again takes about 0.25 s; finding the
 * changed range, reading the new value and moving the positions after it takes a few milliseconds.
 *
 * `patchScalarEdit` decides from the two texts alone: it compares them, finds the one value of
 * the earlier tree that holds every changed character, reads the new text of that value with the
 * same reader as a whole document, and only if that is one value of the same kind (nothing before
 * or after it: no blank, no second token) puts it in the tree. Every character outside the value
 * is unchanged and the characters around it delimited the old value, so the new text reads as the
 * old tree with this value replaced. Keys are never patched: they decide the document's structure.
 */
import { NodeKind, NONE, readJsonTree, type JsonTree } from './json-tree';

/** Comparing texts in blocks of this many characters lets V8 compare whole slices natively. */
const COMPARE_BLOCK = 4096;

export interface ScalarEdit {
  /** The value node that was replaced (now holding the new value). */
  node: number;
}

/**
 * Updates `tree`, read from `before`, to be the tree of `after` when the two texts differ only
 * inside one value that is not a key, and that value's new text is one value of the same kind.
 * Returns the changed node, or undefined (the tree untouched) when the edit is anything else.
 */
export function patchScalarEdit(tree: JsonTree, before: string, after: string): ScalarEdit | undefined {
  const prefix = commonPrefixLength(before, after);
  if (prefix === before.length && prefix === after.length) return undefined;
  const suffix = commonSuffixLength(before, after, Math.min(before.length, after.length) - prefix);
  const changedEnd = before.length - suffix;
  const node = innermostNodeAround(tree, prefix, changedEnd);
  if (node === NONE) return undefined;
  const kind = tree.kinds[node];
  if (kind === NodeKind.Object || kind === NodeKind.Array || kind === NodeKind.Property) return undefined;
  const parent = tree.parents[node];
  if (parent !== NONE && tree.kinds[parent] === NodeKind.Property && tree.firstChildren[parent] === node)
    return undefined;
  const start = tree.starts[node];
  const oldEnd = tree.ends[node];
  const delta = after.length - before.length;
  const written = after.slice(start, oldEnd + delta);
  if (written.length === 0) return undefined;
  const read = readJsonTree(written, 1);
  if (!read || read.size !== 1 || read.kinds[0] !== kind || read.starts[0] !== 0 || read.ends[0] !== written.length)
    return undefined;

  if (kind === NodeKind.String) tree.setString(node, read.str(0));
  else tree.numbers[node] = read.numbers[0];
  if (delta !== 0) {
    // Positions from the old value's end on move; nothing starts there (a delimiter does).
    const { starts, ends, size } = tree;
    for (let i = 0; i < size; i++) {
      if (starts[i] >= oldEnd) starts[i] += delta;
      if (ends[i] >= oldEnd) ends[i] += delta;
    }
  }
  return { node };
}

/**
 * The deepest node whose range holds [from, to] (both ends included, so that an insertion at a
 * value's edge counts as inside it), or NONE.
 */
function innermostNodeAround(tree: JsonTree, from: number, to: number): number {
  if (tree.size === 0 || tree.starts[0] > from || tree.ends[0] < to) return NONE;
  let node = 0;
  for (;;) {
    let inner = NONE;
    for (let child = tree.firstChildren[node]; child !== NONE; child = tree.nextSiblings[child]) {
      if (tree.starts[child] > from) break;
      if (tree.ends[child] >= to) {
        inner = child;
        break;
      }
    }
    if (inner === NONE) return node;
    node = inner;
  }
}

function commonPrefixLength(a: string, b: string): number {
  const n = Math.min(a.length, b.length);
  let i = 0;
  while (i + COMPARE_BLOCK <= n && a.slice(i, i + COMPARE_BLOCK) === b.slice(i, i + COMPARE_BLOCK)) i += COMPARE_BLOCK;
  while (i < n && a.charCodeAt(i) === b.charCodeAt(i)) i++;
  return i;
}

/** The length of the common end of `a` and `b`, at most `limit` (so it never overlaps the common start). */
function commonSuffixLength(a: string, b: string, limit: number): number {
  let k = 0;
  while (
    k + COMPARE_BLOCK <= limit &&
    a.slice(a.length - k - COMPARE_BLOCK, a.length - k) === b.slice(b.length - k - COMPARE_BLOCK, b.length - k)
  )
    k += COMPARE_BLOCK;
  while (k < limit && a.charCodeAt(a.length - 1 - k) === b.charCodeAt(b.length - 1 - k)) k++;
  return k;
}
