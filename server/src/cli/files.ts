/**
 * Finding the spec files named on the command line. Read-only: nothing is ever written.
 */
import { promises as fs } from 'node:fs';
import * as path from 'node:path';
import { isSpecPath } from '../load/paths';

/** A path that cannot be read; the message is one line for the user. */
export class PathError extends Error {}

export interface SpecFile {
  /** Absolute path, used to read the file. */
  absolute: string;
  /** The path shown to the user: relative to the working folder when inside it, with forward slashes. */
  display: string;
}

/**
 * Resolves the operands to spec files: a file is taken as named (whatever its name); a folder is
 * searched recursively for `*.mdp.json` and `*.mdp.ts`, skipping node_modules and dot folders.
 * The result is sorted by display path, without duplicates. Throws PathError on an unreadable path.
 */
export async function collectSpecFiles(operands: readonly string[], cwd: string): Promise<SpecFile[]> {
  const found = new Map<string, SpecFile>();
  for (const operand of operands) {
    const absolute = path.resolve(cwd, operand);
    const stat = await statOrThrow(absolute, operand);
    if (stat.isDirectory()) {
      for (const file of await walk(absolute, operand, new Set())) add(found, file, cwd);
    } else if (stat.isFile()) {
      await checkReadable(absolute, operand);
      add(found, absolute, cwd);
    } else {
      throw new PathError(`cannot read '${operand}': not a file or folder`);
    }
  }
  return [...found.values()].sort((a, b) => (a.display < b.display ? -1 : a.display > b.display ? 1 : 0));
}

function add(found: Map<string, SpecFile>, absolute: string, cwd: string): void {
  if (!found.has(absolute)) found.set(absolute, { absolute, display: displayPath(absolute, cwd) });
}

export function displayPath(absolute: string, cwd: string): string {
  const relative = path.relative(cwd, absolute);
  const inside = relative !== '' && !relative.startsWith('..') && !path.isAbsolute(relative);
  return (inside ? relative : absolute).split(path.sep).join('/');
}

/** Spec files under a folder. `visited` holds real paths, so that a symlink loop ends. */
async function walk(folder: string, shownAs: string, visited: Set<string>): Promise<string[]> {
  const real = await fs.realpath(folder).catch((error: unknown) => {
    throw new PathError(`cannot read '${shownAs}': ${reason(error)}`);
  });
  if (visited.has(real)) return [];
  visited.add(real);
  let entries;
  try {
    entries = await fs.readdir(folder, { withFileTypes: true });
  } catch (error) {
    throw new PathError(`cannot read folder '${shownAs}': ${reason(error)}`);
  }
  const out: string[] = [];
  for (const entry of entries) {
    const child = path.join(folder, entry.name);
    const childShown = path.join(shownAs, entry.name);
    let isDirectory = entry.isDirectory();
    let isFile = entry.isFile();
    if (entry.isSymbolicLink()) {
      // A dangling link is skipped: it names nothing to check.
      const target = await fs.stat(child).catch(() => undefined);
      isDirectory = target?.isDirectory() ?? false;
      isFile = target?.isFile() ?? false;
    }
    if (isDirectory) {
      if (entry.name === 'node_modules' || entry.name.startsWith('.')) continue;
      out.push(...(await walk(child, childShown, visited)));
    } else if (isFile && isSpecPath(entry.name)) {
      await checkReadable(child, childShown);
      out.push(child);
    }
  }
  return out;
}

async function statOrThrow(absolute: string, shownAs: string) {
  try {
    return await fs.stat(absolute);
  } catch (error) {
    throw new PathError(`cannot read '${shownAs}': ${reason(error)}`);
  }
}

async function checkReadable(absolute: string, shownAs: string): Promise<void> {
  try {
    await fs.access(absolute, fs.constants.R_OK);
  } catch (error) {
    throw new PathError(`cannot read '${shownAs}': ${reason(error)}`);
  }
}

/** Reads a spec file as UTF-8 text (a byte order mark is dropped). */
export async function readSpecFile(file: SpecFile): Promise<string> {
  let text: string;
  try {
    text = await fs.readFile(file.absolute, 'utf8');
  } catch (error) {
    throw new PathError(`cannot read '${file.display}': ${reason(error)}`);
  }
  return text.charCodeAt(0) === 0xfeff ? text.slice(1) : text;
}

/** A readable one-line reason for a file-system error (no stack trace, no error code soup). */
export function reason(error: unknown): string {
  const code = (error as { code?: string } | null)?.code;
  switch (code) {
    case 'ENOENT':
      return 'no such file or folder';
    case 'EACCES':
    case 'EPERM':
      return 'permission denied';
    case 'ENOTDIR':
      return 'a part of the path is not a folder';
    case 'ELOOP':
      return 'too many levels of symbolic links';
    case 'EISDIR':
      return 'is a folder';
    default:
      return error instanceof Error ? error.message.split('\n')[0] : String(error);
  }
}
