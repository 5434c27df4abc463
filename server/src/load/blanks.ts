/**
 * Long runs of blanks, which jsonc-parser scans slowly, handed to it as comments instead.
 */

/** Runs of blanks at least this long are handed to the parser as a comment. */
const LONG_BLANK_RUN = 64;

const isBlank = (ch: number): boolean => ch === 32 || ch === 9 || ch === 10 || ch === 13;
/** The same blanks as isBlank; a sticky native search skips a long run much faster than a loop. */
const BLANK_RUN = /[ \t\n\r]+/y;

/**
 * The text with every long run of blanks outside strings and comments turned into a block
 * comment of the same length (its first and last blank kept, so no '/' next to it changes
 * meaning). jsonc-parser builds a blank run's token value one character at a time, which made a
 * 15 MB mostly blank file take 10 s in the garbage collector; a comment is one substring. Comments
 * are allowed wherever blanks are, so offsets, the tree and the parse errors stay the same.
 */
export function maskLongBlanks(text: string): string {
  const n = text.length;
  const pieces: string[] = [];
  let copied = 0;
  let i = 0;
  while (i < n) {
    const ch = text.charCodeAt(i);
    if (ch === 34) {
      // A string ends at its closing quote, or (unclosed) at the end of the line, as the scanner reads it.
      i++;
      while (i < n) {
        const c = text.charCodeAt(i);
        if (c === 92) i += 2;
        else if (c === 34) {
          i++;
          break;
        } else if (c === 10 || c === 13) break;
        else i++;
      }
    } else if (ch === 47 && text.charCodeAt(i + 1) === 47) {
      // A line comment ends at either line break character.
      while (i < n && text.charCodeAt(i) !== 10 && text.charCodeAt(i) !== 13) i++;
    } else if (ch === 47 && text.charCodeAt(i + 1) === 42) {
      const end = text.indexOf('*/', i + 2);
      i = end < 0 ? n : end + 2;
    } else if (isBlank(ch)) {
      const start = i;
      BLANK_RUN.lastIndex = i;
      BLANK_RUN.test(text);
      i = BLANK_RUN.lastIndex;
      if (i - start >= LONG_BLANK_RUN) {
        pieces.push(text.slice(copied, start + 1), '/*', text.slice(start + 3, i - 3), '*/');
        copied = i - 1;
      }
    } else {
      i++;
    }
  }
  if (pieces.length === 0) return text;
  pieces.push(text.slice(copied));
  return pieces.join('');
}
