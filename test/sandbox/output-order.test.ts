/**
 * What model code prints reaches the host on its stdout and stderr pipes, while the job's reply
 * comes on the IPC channel; the host must not report a job before its output has arrived. The
 * child ends each job's output with a mark (OUTPUT_MARK) that the host waits for and removes.
 */
import { describe, expect, test } from 'vitest';
import { MarkCounter } from '../../server/src/sandbox/host';
import { OUTPUT_MARK } from '../../server/src/sandbox/protocol';
import { FAST_LIMITS, analyzeTs, counterSpec } from '../typescript/ts-specs';

describe('end-of-job marks in the output streams', () => {
  const output = `first line\nsecond ${'x'.repeat(40)}\n`;
  const stream = `${output}${OUTPUT_MARK}after\n${OUTPUT_MARK}`;

  test('are counted and removed however the stream is cut into chunks', () => {
    for (let cut = 0; cut <= stream.length; cut++) {
      for (let second = cut; second <= stream.length; second += 7) {
        const marks = new MarkCounter();
        const text =
          [stream.slice(0, cut), stream.slice(cut, second), stream.slice(second)]
            .map((chunk) => marks.strip(chunk))
            .join('') + marks.rest();
        expect(text, `cut at ${cut} and ${second}`).toBe(`${output}after\n`);
        expect(marks.seen).toBe(2);
      }
    }
  });

  test('text that only looks like the start of a mark is kept', () => {
    const marks = new MarkCounter();
    const start = OUTPUT_MARK.slice(0, 5);
    expect(marks.strip(`value ${start}`)).toBe('value ');
    expect(marks.strip('more\n')).toBe(`${start}more\n`);
    expect(marks.strip(`tail ${start}`) + marks.rest()).toBe(`tail ${start}`);
    expect(marks.seen).toBe(0);
  });
});

describe('the output of a job comes with its result', () => {
  test('everything printed before the job ended is counted, on both streams', async () => {
    // 1,000 lines on each stream while the model loads; the report shows the first 4,000
    // characters and counts the rest, so a line still in a pipe would make the count short.
    const extra = `for (let i = 0; i < 1000; i++) { console.log('out ' + i); console.error('err ' + i); }`;
    let printed = 0;
    for (let i = 0; i < 1000; i++) printed += `out ${i}\n`.length + `err ${i}\n`.length;
    for (let run = 0; run < 3; run++) {
      const report = await analyzeTs(
        counterSpec(`    return [{ state: { n: s.n + 1 }, probability: 1, reward: -1 }];`, extra),
        FAST_LIMITS,
      );
      const output = report.modelOutput ?? '';
      expect(output).toContain('out 0\n');
      // The end of the output, where the count is, so that a failure shows what was counted.
      expect(output.slice(-60), `run ${run}`).toContain(`(${printed - 4000} more characters not shown)`);
      expect(output).not.toContain('\ufffd');
    }
  }, 120_000);

  test('a short output printed at the end of loading is there on every run', async () => {
    const extra = `console.log('loaded and ready'); console.error('warned once');`;
    for (let run = 0; run < 5; run++) {
      const report = await analyzeTs(
        counterSpec(`    return [{ state: { n: s.n + 1 }, probability: 1, reward: -1 }];`, extra),
        FAST_LIMITS,
      );
      expect(report.modelOutput).toContain('loaded and ready');
      expect(report.modelOutput).toContain('warned once');
    }
  }, 120_000);
});
