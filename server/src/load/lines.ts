/** A 0-based line and UTF-16 character position, as editors count them. */
export interface TextPosition {
  line: number;
  character: number;
}

/** Converts offsets into line/character positions; built once per document. */
export class LineIndex {
  private readonly lineStarts: number[] = [0];

  constructor(private readonly text: string) {
    for (let i = 0; i < text.length; i++) {
      const ch = text.charCodeAt(i);
      if (ch === 10) this.lineStarts.push(i + 1);
      else if (ch === 13) {
        if (text.charCodeAt(i + 1) === 10) i++;
        this.lineStarts.push(i + 1);
      }
    }
  }

  get lineCount(): number {
    return this.lineStarts.length;
  }

  position(offset: number): TextPosition {
    const clamped = Math.max(0, Math.min(offset, this.text.length));
    let low = 0;
    let high = this.lineStarts.length - 1;
    while (low < high) {
      const mid = (low + high + 1) >> 1;
      if (this.lineStarts[mid] <= clamped) low = mid;
      else high = mid - 1;
    }
    return { line: low, character: clamped - this.lineStarts[low] };
  }

  offset(position: TextPosition): number {
    const line = Math.max(0, Math.min(position.line, this.lineStarts.length - 1));
    const lineEnd = line + 1 < this.lineStarts.length ? this.lineStarts[line + 1] : this.text.length;
    return Math.min(this.lineStarts[line] + Math.max(0, position.character), lineEnd);
  }
}
