import { describe, expect, it } from 'vitest';
import { ProgressBar } from '../../server/src/cli/progress';

function fakeStream(isTTY: boolean) {
  const writes: string[] = [];
  return { writes, stream: { isTTY, columns: 60, write: (text: string) => void writes.push(text) } };
}

describe('progress bar', () => {
  it('draws nothing when stderr is not a terminal', () => {
    let t = 0;
    const { writes, stream } = fakeStream(false);
    const bar = new ProgressBar(stream, 3, { now: () => t });
    t = 5000;
    bar.working('a.mdp.json');
    bar.tick();
    bar.finish();
    expect(writes).toEqual([]);
  });

  it('draws nothing during the first moment, then draws and erases itself', () => {
    let t = 0;
    const { writes, stream } = fakeStream(true);
    const bar = new ProgressBar(stream, 4, { now: () => t, delayMs: 500, intervalMs: 100 });
    bar.working('a.mdp.json');
    t = 400;
    bar.tick();
    expect(writes).toEqual([]);
    t = 600;
    bar.working('b.mdp.json');
    expect(writes).toEqual(['\r\u001b[2K[######------------------] 1/4 b.mdp.json']);
    t = 650;
    bar.tick();
    // A drawn bar is refreshed at most every 100 ms.
    expect(writes).toHaveLength(1);
    t = 800;
    bar.working('c.mdp.json');
    expect(writes[1]).toBe('\r\u001b[2K[############------------] 2/4 c.mdp.json');
    bar.finish();
    expect(writes[2]).toBe('\r\u001b[2K');
    bar.finish();
    expect(writes).toHaveLength(3);
  });

  it('comes back at once after being cleared for other output', () => {
    let t = 0;
    const { writes, stream } = fakeStream(true);
    const bar = new ProgressBar(stream, 2, { now: () => t, delayMs: 500, intervalMs: 100 });
    t = 700;
    bar.working('a.mdp.json');
    bar.tick();
    bar.clear();
    t = 710;
    bar.working('b.mdp.json');
    expect(writes).toEqual([
      '\r\u001b[2K[------------------------] 0/2 a.mdp.json',
      '\r\u001b[2K',
      '\r\u001b[2K[############------------] 1/2 b.mdp.json',
    ]);
  });

  it('fits the line to the terminal width', () => {
    let t = 0;
    const { writes, stream } = fakeStream(true);
    const bar = new ProgressBar(stream, 1, { now: () => t });
    t = 1000;
    bar.working(`specs/${'very-long-folder-name/'.repeat(5)}x.mdp.json`);
    expect(writes[0].replace('\r\u001b[2K', '')).toHaveLength(59);
    expect(writes[0].endsWith('…')).toBe(true);
  });
});
