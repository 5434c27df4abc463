/**
 * Code actions for Episcope diagnostics: the rule's own fixes, "ignore this rule here" (an
 * `ignore` entry in episcope.config.json, or an `episcope-ignore` comment above the line), and
 * "show the rule's documentation".
 */
import { dirname, isAbsolute, join, relative as relativeTo } from 'node:path';
import { pathToFileURL } from 'node:url';
import {
  CodeActionKind,
  type CodeAction,
  type Diagnostic,
  type TextEdit,
  type WorkspaceEdit,
} from 'vscode-languageserver-protocol';
import type { TextDocument } from 'vscode-languageserver-textdocument';
import { LineIndex } from '../load/lines';
import { ignoreCommentEdit, ignoreEntryEdit, type OffsetEdit } from './ignore-edits';
import { COMMAND_REVEAL, COMMAND_SHOW_RULE_DOC, type DiagnosticData, type OffsetFix } from './protocol';

export interface CodeActionContext {
  document: TextDocument;
  /** The spec's file system path, when it is a file. */
  path?: string;
  diagnostics: Diagnostic[];
  /** Maps an offset of an analysed version to the current text (undefined where the text changed). */
  mapOffset(offset: number, version: number): number | undefined;
  /** Where a new config file would go when none applies (the workspace folder holding the spec). */
  newConfigFolder?: string;
  /** The config file that applies to the spec, and its current text (editor's or disk's). */
  configFile?: { path: string; text: string; version: number | null };
  /** What the client can apply. */
  documentChanges: boolean;
  createFiles: boolean;
  /** Whether the client can run the server's commands (reveal, documentation). */
  commands: boolean;
}

export function codeActions(context: CodeActionContext): CodeAction[] {
  const actions: CodeAction[] = [];
  const seenRules = new Set<string>();
  for (const diagnostic of context.diagnostics) {
    if (diagnostic.source !== 'episcope' || typeof diagnostic.code !== 'string') continue;
    const rule = diagnostic.code;
    const data = readData(diagnostic.data);
    if (data) {
      data.fixes.forEach((fix, i) => {
        const edit = fixEdit(context, fix, data.version);
        if (edit) {
          actions.push({
            title: fix.title,
            kind: CodeActionKind.QuickFix,
            diagnostics: [diagnostic],
            isPreferred: i === 0,
            edit,
          });
        }
      });
    }
    if (seenRules.has(rule)) continue;
    seenRules.add(rule);
    const comment = ignoreCommentAction(context, diagnostic, rule);
    if (comment) actions.push(comment);
    const entry = ignoreEntryAction(context, diagnostic, rule);
    if (entry) actions.push(entry);
    if (context.commands) {
      actions.push({
        title: `Show the documentation of rule ${rule}`,
        kind: CodeActionKind.QuickFix,
        diagnostics: [diagnostic],
        command: { title: `Show the documentation of rule ${rule}`, command: COMMAND_SHOW_RULE_DOC, arguments: [rule] },
      });
    }
  }
  return actions;
}

function readData(raw: unknown): DiagnosticData | undefined {
  if (!raw || typeof raw !== 'object') return undefined;
  const data = raw as Partial<DiagnosticData>;
  if (typeof data.version !== 'number' || !Array.isArray(data.fixes)) return undefined;
  return data as DiagnosticData;
}

function fixEdit(context: CodeActionContext, fix: OffsetFix, version: number): WorkspaceEdit | undefined {
  const edits: TextEdit[] = [];
  for (const edit of fix.edits) {
    const start = context.mapOffset(edit.start, version);
    const end = context.mapOffset(edit.end, version);
    if (start === undefined || end === undefined || end < start) return undefined;
    edits.push({
      range: { start: context.document.positionAt(start), end: context.document.positionAt(end) },
      newText: edit.newText,
    });
  }
  return documentEdit(context, context.document.uri, context.document.version, edits);
}

function documentEdit(
  context: CodeActionContext,
  uri: string,
  version: number | null,
  edits: TextEdit[],
): WorkspaceEdit {
  if (context.documentChanges) return { documentChanges: [{ textDocument: { uri, version }, edits }] };
  return { changes: { [uri]: edits } };
}

const CONFIG_FILE_NAME = 'episcope.config.json';

/** A problem with a suppression is fixed, not suppressed. */
function ignorable(rule: string): boolean {
  return rule !== 'suppression' && rule !== 'config';
}

/** `path` relative to `folder` with forward slashes, as ignore globs are written; undefined outside it. */
function relativePath(folder: string, path: string): string | undefined {
  const relative = relativeTo(folder, path);
  if (relative === '' || relative.startsWith('..') || isAbsolute(relative)) return undefined;
  return relative.replace(/\\/g, '/');
}

function ignoreCommentAction(context: CodeActionContext, diagnostic: Diagnostic, rule: string): CodeAction | undefined {
  if (!ignorable(rule)) return undefined;
  const text = context.document.getText();
  const offset = context.document.offsetAt(diagnostic.range.start);
  const { edit, reasonPosition } = ignoreCommentEdit(text, offset, rule);
  const title = `Ignore ${rule} on this line (a comment; then write the reason)`;
  return {
    title,
    kind: CodeActionKind.QuickFix,
    diagnostics: [diagnostic],
    edit: documentEdit(context, context.document.uri, context.document.version, [toTextEdit(context.document, edit)]),
    command: context.commands ? reveal(title, context.document.uri, reasonPosition) : undefined,
  };
}

function ignoreEntryAction(context: CodeActionContext, diagnostic: Diagnostic, rule: string): CodeAction | undefined {
  if (!ignorable(rule) || !context.path) return undefined;
  const existing = context.configFile;
  const configPath =
    existing?.path ?? (context.newConfigFolder ? join(context.newConfigFolder, CONFIG_FILE_NAME) : undefined);
  if (!configPath) return undefined;
  const relative = relativePath(dirname(configPath), context.path);
  if (relative === undefined || relative === '') return undefined;
  const result = ignoreEntryEdit(existing?.text ?? '', rule, relative);
  if (!result) return undefined;
  const configUri = pathToFileURL(configPath).href;
  let edit: WorkspaceEdit;
  if (existing) {
    const lines = new LineIndex(existing.text);
    edit = documentEdit(
      context,
      configUri,
      existing.version,
      result.edits.map((e) => ({
        range: { start: lines.position(e.start), end: lines.position(e.end) },
        newText: e.newText,
      })),
    );
  } else {
    if (!context.documentChanges || !context.createFiles) return undefined;
    edit = {
      documentChanges: [
        { kind: 'create', uri: configUri, options: { ignoreIfExists: true } },
        {
          textDocument: { uri: configUri, version: null },
          edits: result.edits.map((e) => ({ range: zeroRange(), newText: e.newText })),
        },
      ],
    };
  }
  const title = `Ignore ${rule} in ${relative} (${existing ? 'add to' : 'create'} ${CONFIG_FILE_NAME}; then write the reason)`;
  return {
    title,
    kind: CodeActionKind.QuickFix,
    diagnostics: [diagnostic],
    edit,
    command: context.commands ? reveal(title, configUri, result.reasonPosition) : undefined,
  };
}

function reveal(title: string, uri: string, position: { line: number; character: number }) {
  return { title, command: COMMAND_REVEAL, arguments: [uri, position] };
}

function toTextEdit(document: TextDocument, edit: OffsetEdit): TextEdit {
  return {
    range: { start: document.positionAt(edit.start), end: document.positionAt(edit.end) },
    newText: edit.newText,
  };
}

function zeroRange() {
  return { start: { line: 0, character: 0 }, end: { line: 0, character: 0 } };
}
