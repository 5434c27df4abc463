/** URI and path helpers shared by the language server's features. */
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { isSpecPath } from '../load/paths';

/** The file system path of a `file:` URI, else undefined. */
export function filePath(uri: string): string | undefined {
  if (!uri.startsWith('file:')) return undefined;
  try {
    return fileURLToPath(uri);
  } catch {
    return undefined;
  }
}

export function isSpecUri(uri: string): boolean {
  return isSpecPath(uri.split(/[?#]/)[0]);
}

export function isConfigUri(uri: string): boolean {
  return uri.split(/[?#]/)[0].endsWith('/episcope.config.json');
}

/** The last segment of a URI, decoded, for messages. */
export function fileName(uri: string): string {
  const clean = uri.split(/[?#]/)[0];
  return decodeURIComponent(clean.slice(clean.lastIndexOf('/') + 1));
}

export function readOrUndefined(path: string): string | undefined {
  try {
    return readFileSync(path, 'utf8');
  } catch {
    return undefined;
  }
}
