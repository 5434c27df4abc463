/**
 * Open documents, with the edits made since older versions, so that an offset in the current text
 * can be mapped to the text of an older analysis and back. That is what lets hovers answer from the
 * last completed analysis while a newer version is still being analysed.
 */
import { TextDocument } from 'vscode-languageserver-textdocument';
import type { TextDocumentContentChangeEvent } from 'vscode-languageserver-protocol';

/** The text [start, end) of the previous version was replaced by `length` characters. */
interface Edit {
  start: number;
  end: number;
  length: number;
}

interface Entry {
  document: TextDocument;
  /** Per version change, oldest first: the version it produced and its edits in order. */
  history: Array<{ version: number; edits: Edit[] }>;
  /** The oldest version from which every later change is in `history`. */
  baseVersion: number;
}

export class DocumentStore {
  private readonly entries = new Map<string, Entry>();

  open(uri: string, languageId: string, version: number, text: string): TextDocument {
    const document = TextDocument.create(uri, languageId, version, text);
    this.entries.set(uri, { document, history: [], baseVersion: version });
    return document;
  }

  change(uri: string, version: number, changes: TextDocumentContentChangeEvent[]): TextDocument | undefined {
    const entry = this.entries.get(uri);
    if (!entry) return undefined;
    let document = entry.document;
    const edits: Edit[] = [];
    for (const change of changes) {
      if ('range' in change) {
        const start = document.offsetAt(change.range.start);
        const end = document.offsetAt(change.range.end);
        edits.push({ start, end, length: change.text.length });
      } else {
        edits.push({ start: 0, end: document.getText().length, length: change.text.length });
      }
      document = TextDocument.update(document, [change], version);
    }
    entry.document = document;
    entry.history.push({ version, edits });
    return document;
  }

  close(uri: string): void {
    this.entries.delete(uri);
  }

  get(uri: string): TextDocument | undefined {
    return this.entries.get(uri)?.document;
  }

  all(): TextDocument[] {
    return [...this.entries.values()].map((e) => e.document);
  }

  /** Forgets the edits that led up to `version`: nothing older will be mapped again. */
  forgetBefore(uri: string, version: number): void {
    const entry = this.entries.get(uri);
    if (!entry) return;
    if (version <= entry.baseVersion) return;
    entry.history = entry.history.filter((h) => h.version > version);
    entry.baseVersion = version;
  }

  /**
   * Maps an offset of the current text to the text of an older version; undefined when the
   * character was inserted or changed since then (or the history does not reach back that far).
   */
  toVersion(uri: string, offset: number, version: number): number | undefined {
    const entry = this.entries.get(uri);
    if (!entry) return undefined;
    if (entry.document.version === version) return offset;
    if (!this.reaches(entry, version)) return undefined;
    let mapped = offset;
    for (let h = entry.history.length - 1; h >= 0 && entry.history[h].version > version; h--) {
      const edits = entry.history[h].edits;
      for (let e = edits.length - 1; e >= 0; e--) {
        const { start, end, length } = edits[e];
        if (mapped < start) continue;
        if (mapped >= start + length) mapped += end - start - length;
        else return undefined;
      }
    }
    return mapped;
  }

  /** Maps an offset of an older version's text to the current text; undefined where that text was changed. */
  fromVersion(uri: string, offset: number, version: number): number | undefined {
    const entry = this.entries.get(uri);
    if (!entry) return undefined;
    if (entry.document.version === version) return offset;
    if (!this.reaches(entry, version)) return undefined;
    let mapped = offset;
    for (const change of entry.history) {
      if (change.version <= version) continue;
      for (const { start, end, length } of change.edits) {
        if (mapped < start) continue;
        if (mapped >= end) mapped += length - (end - start);
        else return undefined;
      }
    }
    return mapped;
  }

  /** True when the history still holds every change made after `version`. */
  private reaches(entry: Entry, version: number): boolean {
    return version >= entry.baseVersion && version <= entry.document.version;
  }
}
