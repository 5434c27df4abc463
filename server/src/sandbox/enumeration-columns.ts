/**
 * An enumeration's outcome columns and state keys travel through a file, not the IPC channel: the
 * child writes them, one after another, to the host's unlinked temporary file (COLUMN_FD), and its
 * reply (the head: choices, start, problems) says how many outcomes and keys there are. The host reads
 * each column straight into a typed array of its final size and empties the file. So neither
 * process holds a serialised copy of the columns, and no socket-buffer handoffs pace the
 * transfer. The file's content is model-controlled input: a size that does not match the head is
 * a malformed reply, and the child's file-size limit (launch.ts) bounds what it can write.
 */
import { fstatSync, ftruncateSync, readSync, writeSync } from 'node:fs';
import { Buffer } from 'node:buffer';
import type { ChunkedEnumeration, Enumeration, EnumerationHead } from './runtime';

/** Outcome and choice indices are Int32, so no honest enumeration lists more outcomes. */
const MOST_OUTCOMES = 0x7fffffff;

/** Bytes of the columns of `outcomes` outcomes with `terms` reward terms: target (Int32), probability, reward and each term (Float64). */
export function columnBytes(outcomes: number, terms: number): number {
  return outcomes * (4 + 8 * (2 + terms));
}

/** How many state keys follow the columns in the file, and in how many bytes. */
export interface KeyListing {
  count: number;
  bytes: number;
}

/** Keys per piece written (and decoded) at once, so that no single string grows past V8's limit. */
const KEYS_PER_PIECE = 1 << 16;
/** Bytes of keys decoded into one string at most (V8's longest string is about 2^29 characters). */
const KEY_TEXT_BYTES = 1 << 26;

/**
 * Writes the chunks of every outcome column to `fd` from position 0, in the order the host reads
 * them, then the state keys in UTF-8, each followed by a newline (a canonical key is JSON text,
 * which never holds a raw newline).
 */
export function writeColumns(fd: number, chunks: ChunkedEnumeration, keys: readonly string[]): KeyListing {
  let position = 0;
  const write = (bytes: Uint8Array) => {
    let done = 0;
    while (done < bytes.length) done += writeSync(fd, bytes, done, bytes.length - done, position + done);
    position += bytes.length;
  };
  for (const column of [chunks.target, chunks.prob, chunks.reward, ...chunks.terms]) {
    for (const chunk of column) write(new Uint8Array(chunk.buffer, chunk.byteOffset, chunk.byteLength));
  }
  const start = position;
  for (let i = 0; i < keys.length; i += KEYS_PER_PIECE)
    write(Buffer.from(`${keys.slice(i, i + KEYS_PER_PIECE).join('\n')}\n`, 'utf8'));
  return { count: keys.length, bytes: position - start };
}

/** The keys of the file's last `listing.bytes` bytes from `position`, or undefined when they are not `listing.count` lines. */
function readKeys(fd: number, position: number, listing: KeyListing): string[] | undefined {
  const bytes = Buffer.allocUnsafe(listing.bytes);
  readFully(fd, bytes, position);
  const keys: string[] = [];
  for (let from = 0; from < bytes.length;) {
    // Cut at a newline at least KEY_TEXT_BYTES on: a newline byte never occurs inside a UTF-8 character.
    const cut = bytes.length - from > KEY_TEXT_BYTES ? bytes.indexOf(10, from + KEY_TEXT_BYTES) : bytes.length - 1;
    if (cut < 0 || bytes[cut] !== 10) return undefined;
    const lines = bytes.toString('utf8', from, cut).split('\n');
    for (const line of lines) keys.push(line);
    from = cut + 1;
  }
  return keys.length === listing.count ? keys : undefined;
}

function readFully(fd: number, bytes: Uint8Array, position: number): void {
  let done = 0;
  while (done < bytes.length) {
    const got = readSync(fd, bytes, done, bytes.length - done, position + done);
    if (got === 0) throw new RangeError('the column file ended early');
    done += got;
  }
}

/**
 * The whole enumeration from its head and the column file, or a reason why the two do not fit
 * together. The file is emptied either way, so it holds no data between jobs.
 */
export function readColumns(head: EnumerationHead, listing: KeyListing, fd: number): Enumeration | string {
  try {
    const outcomes = (head as { outcomesListed?: unknown } | null)?.outcomesListed;
    if (typeof outcomes !== 'number' || !Number.isInteger(outcomes) || outcomes < 0 || outcomes > MOST_OUTCOMES)
      return 'the outcome count is not a whole number in range';
    if (!Array.isArray(head.termNames) || !head.termNames.every((name) => typeof name === 'string'))
      return 'the term names are not strings';
    const count = (listing as KeyListing | null)?.count;
    const keyBytes = (listing as KeyListing | null)?.bytes;
    if (
      typeof count !== 'number' ||
      typeof keyBytes !== 'number' ||
      !Number.isInteger(count) ||
      !Number.isInteger(keyBytes) ||
      count < 0 ||
      keyBytes < count
    ) {
      return 'the key listing is not two whole numbers in range';
    }
    const expected = columnBytes(outcomes, head.termNames.length) + keyBytes;
    const size = fstatSync(fd).size;
    if (size !== expected)
      return `the column file holds ${size} bytes, not the ${expected} of ${outcomes} outcomes and ${count} state keys`;
    let position = 0;
    const read = <T extends Int32Array | Float64Array>(column: T): T => {
      readFully(fd, new Uint8Array(column.buffer, column.byteOffset, column.byteLength), position);
      position += column.byteLength;
      return column;
    };
    const outcomeTarget = read(new Int32Array(outcomes));
    const outcomeProb = read(new Float64Array(outcomes));
    const outcomeReward = read(new Float64Array(outcomes));
    const termRewards = head.termNames.map(() => read(new Float64Array(outcomes)));
    const stateKeys = count === 0 ? [] : readKeys(fd, position, { count, bytes: keyBytes });
    if (!stateKeys) return `the state keys are not ${count} lines`;
    return { ...head, stateKeys, outcomeTarget, outcomeProb, outcomeReward, termRewards };
  } catch (error) {
    return `the column file could not be read (${error instanceof Error ? error.message : 'unknown error'})`;
  } finally {
    emptyColumnFile(fd);
  }
}

/** Drops whatever the file holds (a failed job's columns, or model code's writes). */
export function emptyColumnFile(fd: number): void {
  try {
    ftruncateSync(fd, 0);
  } catch {
    // The file is closed with its child; nothing is left to free.
  }
}
