/**
 * Bundles a TypeScript spec with its local imports into one CommonJS script for the worker, with a
 * source map so that positions in stack traces can be mapped back to the user's files.
 */
import { build, type Message, type Plugin } from 'esbuild';
import { existsSync } from 'node:fs';
import { SourceMap } from 'node:module';
import { dirname, isAbsolute, resolve } from 'node:path';

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
    pluginBuild.onResolve({ filter: /^episcope(\/.*)?$/ }, (args) => ({ path: args.path, namespace: 'episcope-define' }));
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
    return { code: js.text, map: new SourceMap(JSON.parse(map.text)), root };
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

/** Maps a generated 0-based position of the bundle to the original file and position. */
export function originalPosition(bundle: ModelBundle, line: number, column: number): SourceLocation | undefined {
  const entry = bundle.map.findEntry(line, column) as { originalSource?: string; originalLine?: number; originalColumn?: number };
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
export function locateStack(bundle: ModelBundle, stack: string | undefined, scriptName: string): SourceLocation | undefined {
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
