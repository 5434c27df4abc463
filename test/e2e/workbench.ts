/**
 * Driving the VS Code workbench served by code-server through Chromium (playwright-core, no browser
 * download). Every helper waits on a selector or a condition, never on a fixed delay, so the
 * scenario holds on a slow 2-core machine.
 */
import { mkdirSync } from 'node:fs';
import { join } from 'node:path';
import { chromium, type Browser, type Locator, type Page } from 'playwright-core';
import type { E2eInstall } from './codeServer';

export const VIEWPORT = { width: 1280, height: 800 };

export async function launchBrowser(install: E2eInstall, env: NodeJS.ProcessEnv): Promise<Browser> {
  return chromium.launch({
    executablePath: install.chromium,
    env: env as Record<string, string>,
    args: [
      '--no-sandbox',
      '--disable-gpu',
      '--disable-dev-shm-usage',
      '--disable-background-networking',
      '--disable-component-update',
      '--disable-sync',
      '--no-first-run',
    ],
  });
}

/** The rectangle of one occurrence of `needle` on the first visible editor line containing `lineText`. */
interface Box {
  x: number;
  y: number;
  width: number;
  height: number;
}

export class Workbench {
  private shotCount = 0;

  constructor(
    readonly page: Page,
    private readonly shotsDir: string,
  ) {
    mkdirSync(shotsDir, { recursive: true });
  }

  /** Opens a folder and answers the workspace-trust question with `trust`. */
  async openFolder(url: string, trust: boolean): Promise<void> {
    await this.page.goto(url);
    await this.page.locator('.monaco-workbench').waitFor({ timeout: 90_000 });
    const dialog = this.page.locator('.monaco-dialog-box');
    await dialog.waitFor({ timeout: 60_000 });
    const answer = trust ? 'Yes, I trust the authors' : "No, I don't trust the authors";
    await dialog.getByRole('button', { name: answer }).click();
    await dialog.waitFor({ state: 'detached' });
  }

  /** The status bar says whether the window is in restricted mode. */
  restrictedModeIndicator(): Locator {
    return this.page.locator('.statusbar-item', { hasText: 'Restricted Mode' });
  }

  /** Opens a file by name through Quick Open (Ctrl+P) and waits for its editor tab. */
  async openFile(name: string): Promise<void> {
    await this.page.keyboard.press('Control+P');
    const input = this.page.locator('.quick-input-widget input');
    await input.waitFor({ state: 'visible' });
    await input.fill(name);
    await this.page.locator('.quick-input-list .monaco-list-row', { hasText: name }).first().waitFor();
    await this.page.keyboard.press('Enter');
    await this.page.locator('.tab.active', { hasText: name }).waitFor();
    await this.page.locator('.monaco-editor .view-lines .view-line').first().waitFor();
  }

  /** Moves the cursor to a 1-based line with Go to Line (Ctrl+G); the editor scrolls it into view. */
  async goToLine(line: number): Promise<void> {
    await this.page.keyboard.press('Control+G');
    const input = this.page.locator('.quick-input-widget input');
    await input.waitFor({ state: 'visible' });
    // Go to Line is Quick Open with the ':' prefix; filling the box replaces it, so it is typed again.
    await input.fill(`:${line}`);
    await this.page.keyboard.press('Enter');
    await input.waitFor({ state: 'hidden' });
    await this.page
      .locator('.statusbar-item', { hasText: `Ln ${line},` })
      .first()
      .waitFor();
  }

  /** Shows the Problems panel (Ctrl+Shift+M) unless it is already showing. */
  async showProblems(): Promise<void> {
    const panel = this.page.locator('.markers-panel');
    if (await panel.isVisible()) return;
    await this.page.keyboard.press('Control+Shift+M');
    await panel.waitFor({ state: 'visible' });
  }

  /** A row of the Problems panel whose text contains every one of `parts`. */
  problem(...parts: string[]): Locator {
    let rows = this.page.locator('.markers-panel .monaco-list-row');
    for (const part of parts) rows = rows.filter({ hasText: part });
    return rows.first();
  }

  async problemTexts(): Promise<string[]> {
    return this.page.locator('.markers-panel .monaco-list-row').allInnerTexts();
  }

  /** Waits until the Problems panel shows a row containing every one of `parts`, and returns its text. */
  async waitForProblem(parts: string[], timeout = 90_000): Promise<string> {
    const row = this.problem(...parts);
    await row.waitFor({ state: 'visible', timeout });
    return row.innerText();
  }

  async waitForNoProblem(parts: string[], timeout = 60_000): Promise<void> {
    await this.problem(...parts).waitFor({ state: 'detached', timeout });
  }

  /** Where `needle` is drawn on the first editor line containing `lineText` (its nth occurrence). */
  async textBox(lineText: string, needle: string, nth = 0): Promise<Box> {
    const box = await this.page.evaluate(
      ({ lineText, needle, nth }) => {
        // Runs in the page. The project compiles without the DOM library, so the page's globals are
        // reached through globalThis and typed only as far as this function uses them.
        interface TextNode {
          data: string;
        }
        const page = globalThis as unknown as {
          document: {
            querySelectorAll(selector: string): ArrayLike<{ textContent: string | null }>;
            createTreeWalker(root: unknown, show: number): { nextNode(): TextNode | null };
            createRange(): {
              setStart(node: TextNode, offset: number): void;
              setEnd(node: TextNode, offset: number): void;
              getBoundingClientRect(): Box;
            };
          };
        };
        const SHOW_TEXT = 4;
        const clean = (text: string) => text.replace(/\u00a0/g, ' ');
        const line = Array.from(page.document.querySelectorAll('.monaco-editor .view-lines .view-line')).find(
          (candidate) => clean(candidate.textContent ?? '').includes(lineText),
        );
        if (!line) return null;
        const walker = page.document.createTreeWalker(line, SHOW_TEXT);
        const pieces: Array<{ node: TextNode; start: number }> = [];
        let full = '';
        for (let node = walker.nextNode(); node; node = walker.nextNode()) {
          pieces.push({ node, start: full.length });
          full += node.data;
        }
        full = clean(full);
        let index = -1;
        for (let k = 0; k <= nth; k++) {
          index = full.indexOf(needle, index + 1);
          if (index < 0) return null;
        }
        const locate = (offset: number) => {
          const piece = [...pieces].reverse().find((candidate) => candidate.start <= offset)!;
          return { node: piece.node, offset: offset - piece.start };
        };
        const from = locate(index);
        const to = locate(index + needle.length - 1);
        const range = page.document.createRange();
        range.setStart(from.node, from.offset);
        range.setEnd(to.node, to.offset + 1);
        const rect = range.getBoundingClientRect();
        return { x: rect.x, y: rect.y, width: rect.width, height: rect.height };
      },
      { lineText, needle, nth },
    );
    if (!box)
      throw new Error(`No editor line shows ${JSON.stringify(needle)} on a line with ${JSON.stringify(lineText)}`);
    return box;
  }

  /**
   * Hovers the mouse over `needle` until a hover containing `expected` shows (the first move can be
   * swallowed while the editor settles), and returns the hover element.
   */
  async hover(lineText: string, needle: string, expected: string | RegExp, timeout = 60_000): Promise<Locator> {
    const deadline = Date.now() + timeout;
    const hover = this.page.locator('.monaco-hover:visible', { hasText: expected }).first();
    for (let attempt = 0; ; attempt++) {
      const box = await this.textBox(lineText, needle);
      const y = box.y + box.height / 2;
      await this.page.mouse.move(box.x + 1, y);
      await this.page.mouse.move(box.x + box.width / 2, y, { steps: 3 });
      try {
        await hover.waitFor({
          state: 'visible',
          timeout: Math.min(5_000 + attempt * 1_000, Math.max(1, deadline - Date.now())),
        });
        await settled(hover);
        return hover;
      } catch (error) {
        if (Date.now() >= deadline) throw error;
        await this.page.mouse.move(5, VIEWPORT.height / 2);
      }
    }
  }

  /** A visible code lens containing `text` (editors of background tabs stay in the page, hidden). */
  codeLens(text: string | RegExp): Locator {
    return this.page.locator('.monaco-editor .codelens-decoration:visible', { hasText: text }).first();
  }

  /** Moves the pointer onto the empty part of the activity bar, where it raises no hover or tooltip. */
  async parkPointer(): Promise<void> {
    await this.page.mouse.move(24, VIEWPORT.height - 200);
  }

  async dismissHover(): Promise<void> {
    await this.page.mouse.move(5, VIEWPORT.height / 2);
    await this.page.keyboard.press('Escape');
    await this.page
      .locator('.monaco-hover:visible')
      .first()
      .waitFor({ state: 'detached', timeout: 10_000 })
      .catch(() => undefined);
  }

  /** Puts the cursor on `needle`, opens the quick-fix menu (Ctrl+.) and waits for an entry matching `title`. */
  async openQuickFixes(lineText: string, needle: string, title: string | RegExp, timeout = 60_000): Promise<Locator> {
    const deadline = Date.now() + timeout;
    const menu = this.page.locator('.action-widget:not(.action-list-submenu-panel)');
    const entry = menu.locator('.monaco-list-row', { hasText: title }).first();
    for (;;) {
      const box = await this.textBox(lineText, needle);
      await this.page.mouse.click(box.x + box.width / 2, box.y + box.height / 2);
      await this.page.keyboard.press('Control+.');
      try {
        await entry.waitFor({ state: 'visible', timeout: 5_000 });
        await settled(menu);
        return entry;
      } catch (error) {
        // The actions are computed from the latest diagnostics; ask again until they arrive.
        if (Date.now() >= deadline) throw error;
        await this.page.keyboard.press('Escape');
      }
    }
  }

  async quickFixTitles(): Promise<string[]> {
    return this.page.locator('.action-widget:not(.action-list-submenu-panel) .monaco-list-row').allInnerTexts();
  }

  /** Saves the active editor and waits for its tab to lose the dirty mark. */
  async save(): Promise<void> {
    await this.page.keyboard.press('Control+S');
    await this.page.locator('.tab.active.dirty').waitFor({ state: 'detached', timeout: 30_000 });
  }

  /** The text of the visible editor line containing `lineText`. */
  async lineText(lineText: string): Promise<string> {
    const text = await this.page
      .locator('.monaco-editor .view-lines .view-line', { hasText: lineText })
      .first()
      .innerText();
    return text.replace(/\u00a0/g, ' ');
  }

  /** Saves a numbered screenshot of the whole window and returns its path; the pointer is parked first unless kept. */
  async screenshot(name: string, options: { keepPointer?: boolean } = {}): Promise<string> {
    if (!options.keepPointer) await this.parkPointer();
    this.shotCount += 1;
    const path = join(this.shotsDir, `${String(this.shotCount).padStart(2, '0')}-${name}.png`);
    await this.page.screenshot({ path });
    return path;
  }
}

/** Waits until the CSS animations of an element and its content (a hover's fade-in) have finished. */
async function settled(locator: Locator): Promise<void> {
  await locator.evaluate(async (element) => {
    const animated = element as unknown as {
      getAnimations(options: { subtree: boolean }): Array<{ finished: Promise<unknown> }>;
    };
    await Promise.all(
      animated.getAnimations({ subtree: true }).map((animation) => animation.finished.catch(() => undefined)),
    );
  });
}
