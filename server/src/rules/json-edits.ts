/**
 * Minimal text edits on a JSON spec for quick fixes: add or set a property, append to a list,
 * remove a list item. Edits touch only the text they change (no reformatting of neighbours) and
 * keep the document's indentation and line ends.
 */
import { parseTree, type Node } from 'jsonc-parser';
import { maskLongBlanks } from '../load/blanks';
import type { TextEdit } from './types';

type Path = ReadonlyArray<string | number>;

/** A JSON value written on one line, with a space after commas (`["go", "hover"]`). */
export function inlineJson(value: unknown): string {
  if (Array.isArray(value)) return `[${value.map(inlineJson).join(', ')}]`;
  if (value !== null && typeof value === 'object') {
    const entries = Object.entries(value);
    return entries.length === 0
      ? '{}'
      : `{ ${entries.map(([k, v]) => `${JSON.stringify(k)}: ${inlineJson(v)}`).join(', ')} }`;
  }
  return JSON.stringify(value);
}

export class JsonEditor {
  private tree: Node | undefined | null = null;
  private readonly eol: string;

  constructor(private readonly text: string) {
    this.eol = text.includes('\r\n') ? '\r\n' : '\n';
  }

  /** Adds `"key": value` at the end of the object at `path`. */
  addProperty(path: Path, key: string, value: unknown): TextEdit[] | undefined {
    const object = this.nodeAt(path);
    if (object?.type !== 'object') return undefined;
    const entry = `${JSON.stringify(key)}: ${inlineJson(value)}`;
    const properties = object.children ?? [];
    if (properties.length === 0)
      return [{ span: { start: object.offset + 1, end: object.offset + 1 }, newText: ` ${entry} ` }];
    const last = properties[properties.length - 1];
    const lastEnd = last.offset + last.length;
    if (this.lineStart(last.offset) === this.lineStart(object.offset)) {
      return [{ span: { start: lastEnd, end: lastEnd }, newText: `, ${entry}` }];
    }
    const indent = this.text.slice(this.lineStart(last.offset), last.offset);
    const indentation = /^[ \t]*$/.test(indent) ? indent : '';
    return [{ span: { start: lastEnd, end: lastEnd }, newText: `,${this.eol}${indentation}${entry}` }];
  }

  /** Sets property `key` of the object at `path`: replaces its value, or adds it. */
  setProperty(path: Path, key: string, value: unknown): TextEdit[] | undefined {
    const object = this.nodeAt(path);
    if (object?.type !== 'object') return undefined;
    const existing = this.nodeAt([...path, key]);
    if (existing && existing !== object)
      return [{ span: { start: existing.offset, end: existing.offset + existing.length }, newText: inlineJson(value) }];
    return this.addProperty(path, key, value);
  }

  /** Appends `value` to the list at `path`. */
  appendToArray(path: Path, value: unknown): TextEdit[] | undefined {
    const list = this.nodeAt(path);
    if (list?.type !== 'array') return undefined;
    const items = list.children ?? [];
    if (items.length === 0)
      return [{ span: { start: list.offset + 1, end: list.offset + 1 }, newText: inlineJson(value) }];
    const last = items[items.length - 1];
    const end = last.offset + last.length;
    return [{ span: { start: end, end }, newText: `, ${inlineJson(value)}` }];
  }

  /** Removes item `index` of the list at `path`, with its separating comma (and its lines when it has them to itself). */
  removeArrayItem(path: Path, index: number): TextEdit[] | undefined {
    const list = this.nodeAt(path);
    const items = list?.type === 'array' ? (list.children ?? []) : [];
    const item = items[index];
    if (!item) return undefined;
    const next = items[index + 1];
    const previous = items[index - 1];
    if (next) {
      const end = this.endOfItemSeparator(item);
      if (end !== undefined && this.ownsLineStart(item))
        return [{ span: { start: this.lineStart(item.offset), end }, newText: '' }];
      return [{ span: { start: item.offset, end: next.offset }, newText: '' }];
    }
    if (previous)
      return [{ span: { start: previous.offset + previous.length, end: item.offset + item.length }, newText: '' }];
    return [{ span: { start: item.offset, end: item.offset + item.length }, newText: '' }];
  }

  private nodeAt(path: Path): Node | undefined {
    if (this.tree === null) this.tree = parseTree(maskLongBlanks(this.text), [], { allowTrailingComma: true });
    let node = this.tree;
    for (const segment of path) {
      if (!node) return undefined;
      if (node.type === 'object' && typeof segment === 'string') {
        const properties = node.children ?? [];
        let found: Node | undefined;
        // The last property of a repeated key is the one that counts (as in JSON.parse).
        for (let i = properties.length - 1; i >= 0 && !found; i--) {
          if (properties[i].children?.[0]?.value === segment) found = properties[i].children?.[1];
        }
        node = found;
      } else if (node.type === 'array' && typeof segment === 'number') {
        node = node.children?.[segment];
      } else {
        return undefined;
      }
    }
    return node;
  }

  private lineStart(offset: number): number {
    let i = offset;
    while (i > 0 && this.text[i - 1] !== '\n' && this.text[i - 1] !== '\r') i--;
    return i;
  }

  /**
   * After an item followed by a comma: the end of its line (past the line break) when only white
   * space or a line comment follows the comma there; undefined otherwise.
   */
  private endOfItemSeparator(item: Node): number | undefined {
    const text = this.text;
    let i = item.offset + item.length;
    while (text[i] === ' ' || text[i] === '\t') i++;
    if (text[i] !== ',') return undefined;
    i++;
    while (text[i] === ' ' || text[i] === '\t') i++;
    if (text.startsWith('//', i)) while (i < text.length && text[i] !== '\n' && text[i] !== '\r') i++;
    if (text[i] === '\r' && text[i + 1] === '\n') return i + 2;
    if (text[i] === '\n' || text[i] === '\r') return i + 1;
    return undefined;
  }

  /** True when only white space stands before the node on its line. */
  private ownsLineStart(node: Node): boolean {
    return /^[ \t]*$/.test(this.text.slice(this.lineStart(node.offset), node.offset));
  }
}
