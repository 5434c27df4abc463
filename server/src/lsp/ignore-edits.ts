/**
 * The text edits behind "ignore this rule here": an entry appended to the `ignore` list of
 * `episcope.config.json` (created when there is none), or an `episcope-ignore` line comment above the
 * finding. Both leave the reason empty on purpose: a suppression takes effect only once a person has
 * written why the finding is acceptable (an empty reason is itself reported), and the editor puts
 * the cursor where the reason goes.
 */
import { applyEdits, findNodeAtLocation, modify, parseTree, type ParseError } from 'jsonc-parser';
import { LineIndex, type TextPosition } from '../load/lines';

/** The marker of a suppression comment (see suppress.ts, which reads these comments). */
const IGNORE_MARKER = 'episcope-ignore';

export interface OffsetEdit {
  start: number;
  end: number;
  newText: string;
}

export interface IgnoreEntryEdit {
  /** Edits of the existing text (for a new file: one insertion into the empty text). */
  edits: OffsetEdit[];
  /** Where the reason goes, in the text after the edits: inside the empty reason string. */
  reasonPosition: TextPosition;
}

/**
 * Appends `{rule, path, reason: ""}` to the config's `ignore` list, keeping every other character of
 * the file (comments and formatting included). Undefined when the file is not valid JSON (an edit
 * could then damage it) or already ignores the rule for that path.
 */
export function ignoreEntryEdit(configText: string, rule: string, path: string): IgnoreEntryEdit | undefined {
  const errors: ParseError[] = [];
  const root = parseTree(configText, errors, { allowTrailingComma: true, disallowComments: false });
  let edits: OffsetEdit[];
  let newText: string;
  if (configText.trim() === '') {
    newText = `{\n  "ignore": [\n    { "rule": ${JSON.stringify(rule)}, "path": ${JSON.stringify(path)}, "reason": "" }\n  ]\n}\n`;
    edits = [{ start: 0, end: configText.length, newText }];
  } else {
    if (errors.length > 0 || !root || root.type !== 'object') return undefined;
    const existing = findNodeAtLocation(root, ['ignore']);
    if (existing?.type === 'array') {
      for (const item of existing.children ?? []) {
        const r = findNodeAtLocation(item, ['rule'])?.value;
        const p = findNodeAtLocation(item, ['path'])?.value;
        if ((r === rule || r === '*') && p === path) return undefined;
      }
    } else if (existing) return undefined;
    const eol = configText.includes('\r\n') ? '\r\n' : '\n';
    const indent = /^( +|\t)"/m.exec(configText)?.[1] ?? '  ';
    const result = modify(
      configText,
      ['ignore', -1],
      { rule, path, reason: '' },
      {
        isArrayInsertion: true,
        formattingOptions: {
          insertSpaces: !indent.startsWith('\t'),
          tabSize: indent.startsWith('\t') ? 1 : indent.length,
          eol,
        },
      },
    );
    edits = result.map((e) => ({ start: e.offset, end: e.offset + e.length, newText: e.content }));
    newText = applyEdits(configText, result);
  }
  const updated = parseTree(newText, [], { allowTrailingComma: true, disallowComments: false });
  const list = updated && findNodeAtLocation(updated, ['ignore']);
  const added = list?.children?.[list.children.length - 1];
  const reason = added && findNodeAtLocation(added, ['reason']);
  if (!reason) return undefined;
  // Inside the quotes of the empty string.
  return { edits, reasonPosition: new LineIndex(newText).position(reason.offset + 1) };
}

export interface IgnoreCommentEdit {
  edit: OffsetEdit;
  /** Where the reason goes, after the edit: the end of the inserted comment. */
  reasonPosition: TextPosition;
}

/**
 * A line comment `// episcope-ignore RULE: ` inserted on its own line above the line holding
 * `offset`, indented like it. Works in TypeScript and in JSON specs (which allow comments).
 */
export function ignoreCommentEdit(text: string, offset: number, rule: string): IgnoreCommentEdit {
  const lines = new LineIndex(text);
  const line = lines.position(offset).line;
  const lineStart = lines.offset({ line, character: 0 });
  const indent = /^[ \t]*/.exec(text.slice(lineStart, lineStart + 200))?.[0] ?? '';
  const eol = text.includes('\r\n') ? '\r\n' : '\n';
  const comment = `${indent}// ${IGNORE_MARKER} ${rule}: `;
  return {
    edit: { start: lineStart, end: lineStart, newText: `${comment}${eol}` },
    reasonPosition: { line, character: comment.length },
  };
}
