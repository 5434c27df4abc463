/**
 * A progress bar on stderr for long runs at a terminal. It stays invisible when stderr is not a
 * terminal (piped, redirected, CI logs) and during the first moment of a run, so that quick checks
 * print nothing extra; it erases itself before the results are printed.
 */

export interface ProgressStream {
  write(text: string): void;
  isTTY?: boolean;
  /** Terminal width in characters, when known. */
  columns?: number;
}

export interface ProgressOptions {
  /** Nothing is drawn before this many milliseconds have passed since the start. */
  delayMs?: number;
  /** Shortest time between two redraws, in milliseconds. */
  intervalMs?: number;
  now?: () => number;
}

const BAR_WIDTH = 24;

export class ProgressBar {
  private readonly start: number;
  private readonly delayMs: number;
  private readonly intervalMs: number;
  private readonly now: () => number;
  private done = 0;
  private label = '';
  private lastDraw = -Infinity;
  private drawn = false;

  constructor(
    private readonly stream: ProgressStream,
    private readonly total: number,
    options: ProgressOptions = {},
  ) {
    this.now = options.now ?? Date.now;
    this.start = this.now();
    this.delayMs = options.delayMs ?? 500;
    this.intervalMs = options.intervalMs ?? 100;
  }

  /** Whether the bar may ever draw (stderr is a terminal). */
  get enabled(): boolean {
    return this.stream.isTTY === true && this.total > 0;
  }

  /** Says which item is being worked on now (shown beside the bar). */
  working(label: string): void {
    this.label = label;
    this.maybeDraw();
  }

  /** Marks one more item as done. */
  tick(): void {
    this.done = Math.min(this.total, this.done + 1);
    if (this.drawn) this.maybeDraw();
  }

  /**
   * Erases the bar, if it is drawn: call before printing to the same terminal. The next
   * `working` draws it again.
   */
  clear(): void {
    if (this.drawn) this.stream.write('\r\u001b[2K');
    this.drawn = false;
  }

  /** Erases the bar for good at the end of the run. */
  finish(): void {
    this.clear();
  }

  private maybeDraw(): void {
    if (!this.enabled) return;
    const t = this.now();
    if (t - this.start < this.delayMs) return;
    // A drawn bar is refreshed at most every intervalMs; an erased one comes back at once.
    if (this.drawn && t - this.lastDraw < this.intervalMs) return;
    this.lastDraw = t;
    this.drawn = true;
    this.stream.write(`\r\u001b[2K${this.line()}`);
  }

  /** The bar's text, fitted to the terminal width. */
  line(): string {
    const filled = Math.round((this.done / this.total) * BAR_WIDTH);
    const bar = `[${'#'.repeat(filled)}${'-'.repeat(BAR_WIDTH - filled)}]`;
    const text = `${bar} ${this.done}/${this.total} ${this.label}`;
    const width = Math.max(20, (this.stream.columns ?? 80) - 1);
    return text.length > width ? `${text.slice(0, width - 1)}…` : text;
  }
}
