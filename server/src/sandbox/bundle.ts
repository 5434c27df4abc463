/**
 * Bundles a TypeScript spec with its local imports into one CommonJS script for the sandbox, with a
 * source map so that positions in stack traces can be mapped back to the user's files. Every loop
 * body gets a call of the sandbox's loop check, so that an endless loop stops itself at its line.
 */
import { build, type Message, type Plugin } from 'esbuild';
import { ts } from 'ts-morph';
import { existsSync } from 'node:fs';
import { SourceMap } from 'node:module';
import { dirname, isAbsolute, resolve } from 'node:path';
import { LOOP_CHECK } from './protocol';

/** A 0-based line and column in a source file. */
export interface SourceLocation {
  file: string;
  line: number;
  column: number;
}

export interface ModelBundle {
  code: string;
  map: SourceMap;
  /** The directory the map's `sources` are relative to. */
  root: string;
  /** Text inserted by the loop instrumentation, per 0-based line: original column and length, by column. */
  insertions: Map<number, Array<{ column: number; length: number }>>;
}

export interface BundleFailure {
  message: string;
  location?: SourceLocation;
}

/**
 * Imports of the package itself (`import { defineMdp } from "episcope"`) resolve to an identity
 * function, so a spec runs whether or not the package is installed next to it.
 */
const definePlugin: Plugin = {
  name: 'episcope-define',
  setup(pluginBuild) {
    pluginBuild.onResolve({ filter: /^episcope(\/.*)?$/ }, (args) => ({
      path: args.path,
      namespace: 'episcope-define',
    }));
    pluginBuild.onLoad({ filter: /.*/, namespace: 'episcope-define' }, () => ({
      contents: 'export function defineMdp(definition) { return definition; }\nexport default defineMdp;\n',
      loader: 'js',
    }));
  },
};

/** Bundles the spec text (which may be unsaved) as if it were the file at `path`. */
export async function bundleModel(path: string, text: string): Promise<ModelBundle | BundleFailure> {
  // An unsaved document may name a folder that does not exist; its local imports cannot resolve then.
  const folder = resolve(dirname(path));
  const root = existsSync(folder) ? folder : process.cwd();
  try {
    const result = await build({
      stdin: { contents: text, resolveDir: root, sourcefile: resolve(path), loader: 'ts' },
      absWorkingDir: root,
      outfile: resolve(root, '__episcope_model__.js'),
      bundle: true,
      platform: 'node',
      format: 'cjs',
      target: 'node20',
      write: false,
      sourcemap: 'external',
      sourcesContent: false,
      // Strict mode makes writes to the frozen, enumerated states throw instead of failing silently.
      banner: { js: '"use strict";' },
      plugins: [definePlugin],
      logLevel: 'silent',
    });
    const js = result.outputFiles.find((file) => file.path.endsWith('.js'));
    const map = result.outputFiles.find((file) => file.path.endsWith('.js.map'));
    if (!js || !map) return { message: 'the bundler produced no output' };
    const instrumented = instrumentLoops(js.text);
    return {
      code: instrumented.code,
      map: new SourceMap(JSON.parse(map.text)),
      root,
      insertions: instrumented.insertions,
    };
  } catch (error) {
    const messages = (error as { errors?: Message[] }).errors;
    const first = messages?.[0];
    if (!first) return { message: error instanceof Error ? error.message : String(error) };
    const location = first.location
      ? { file: resolve(root, first.location.file), line: first.location.line - 1, column: first.location.column }
      : undefined;
    return { message: first.text, location };
  }
}

/**
 * Puts a call of LOOP_CHECK first in every loop body (a body that is not a block is wrapped in one).
 * Nothing is inserted across lines, so line numbers stay those of the bundle; the columns shifted on
 * a line are recorded to map stack positions back (`uninstrumentedColumn`).
 */
export function instrumentLoops(code: string): { code: string; insertions: ModelBundle['insertions'] } {
  const source = ts.createSourceFile('model.js', code, ts.ScriptTarget.Latest, false, ts.ScriptKind.JS);
  const edits: Array<{ at: number; text: string }> = [];
  const visit = (node: ts.Node): void => {
    if (ts.isIterationStatement(node, false)) {
      const body = node.statement;
      if (ts.isBlock(body)) edits.push({ at: body.getStart(source) + 1, text: `${LOOP_CHECK}();` });
      else {
        edits.push({ at: body.getStart(source), text: `{${LOOP_CHECK}();` });
        edits.push({ at: body.end, text: '}' });
      }
    }
    ts.forEachChild(node, visit);
  };
  visit(source);
  edits.sort((a, b) => a.at - b.at);
  const parts: string[] = [];
  const insertions: ModelBundle['insertions'] = new Map();
  let from = 0;
  for (const edit of edits) {
    parts.push(code.slice(from, edit.at), edit.text);
    from = edit.at;
    const { line, character } = source.getLineAndCharacterOfPosition(edit.at);
    let list = insertions.get(line);
    if (!list) insertions.set(line, (list = []));
    list.push({ column: character, length: edit.text.length });
  }
  parts.push(code.slice(from));
  return { code: parts.join(''), insertions };
}

/** The bundle's column of an instrumented position (inside an inserted call: where it was inserted). */
function uninstrumentedColumn(bundle: ModelBundle, line: number, column: number): number {
  const list = bundle.insertions?.get(line);
  if (!list) return column;
  let shift = 0;
  for (const insertion of list) {
    const start = insertion.column + shift;
    if (column < start) break;
    if (column < start + insertion.length) return insertion.column;
    shift += insertion.length;
  }
  return column - shift;
}

/** Maps a generated 0-based position of the (instrumented) bundle to the original file and position. */
export function originalPosition(
  bundle: ModelBundle,
  line: number,
  generatedColumn: number,
): SourceLocation | undefined {
  const column = uninstrumentedColumn(bundle, line, generatedColumn);
  const entry = bundle.map.findEntry(line, column) as {
    originalSource?: string;
    originalLine?: number;
    originalColumn?: number;
  };
  if (entry.originalSource === undefined || entry.originalLine === undefined) return undefined;
  const source = entry.originalSource.replace(/^file:\/\//, '');
  return {
    file: isAbsolute(source) ? source : resolve(bundle.root, source),
    line: entry.originalLine,
    column: entry.originalColumn ?? 0,
  };
}

/**
 * The original location of the innermost stack frame that lies in model code (frames of Episcope's
 * own runtime are skipped). Stack lines look like "at fn (episcope-model.js:12:5)".
 */
export function locateStack(
  bundle: ModelBundle,
  stack: string | undefined,
  scriptName: string,
): SourceLocation | undefined {
  if (!stack) return undefined;
  const escaped = scriptName.replace(/[.*+?^${}()|[\]\\]/g, '\\$&');
  const frame = new RegExp(`${escaped}:(\\d+):(\\d+)`);
  for (const line of stack.split('\n')) {
    const match = frame.exec(line);
    if (!match) continue;
    const mapped = originalPosition(bundle, Number(match[1]) - 1, Number(match[2]) - 1);
    if (mapped) return mapped;
  }
  return undefined;
}
